package verify

import (
	"crypto/ed25519"
	"errors"
	"fmt"
	"io"

	"ingot/format"
	"ingot/verify/gate"
)

// The names of the checks verify adds on request, after those File runs.
const (
	CheckSignature   = "signature"
	CheckReleaseGate = "release-gate"
)

// Signature checks the Ed25519 signature of the model file at path against
// pub: a missing signature, another key, or any changed byte fails it. A
// defect of the file is reported where it lies: the signature section's key
// id or signature bytes, or a damaged section.
func Signature(path string, pub ed25519.PublicKey) Check {
	c := Check{Name: CheckSignature, Status: Pass}
	fail := func(msg string) Check {
		c.Status, c.Count = Fail, 1
		c.Detail = msg
		c.Problems = []Problem{{Section: "signature", Offset: -1, Msg: msg}}
		return c
	}
	m, err := format.Open(path)
	if err != nil {
		return fail("cannot check: the model does not open")
	}
	defer m.Close()
	if err := m.CheckSignature(pub); err != nil {
		if errors.Is(err, format.ErrUnsigned) {
			return fail("the model is not signed")
		}
		c = fail(err.Error())
		var fe *format.FormatError
		if errors.As(err, &fe) {
			c.Detail = fe.Msg
			c.Problems = []Problem{fe.Problem()}
		}
		return c
	}
	id, _ := m.Signed()
	c.Detail = fmt.Sprintf("signed by key id %x, content digest matches", id[:8])
	return c
}

// Gate says how to gate a release: the model it replaces, held-out text
// and the largest perplexity increase accepted.
type Gate struct {
	// Baseline is the model the candidate replaces, open; BaselineName
	// names it in the report.
	Baseline     *format.Model
	BaselineName string
	// Heldout is the held-out text, one sentence per line, named
	// HeldoutName.
	Heldout     io.Reader
	HeldoutName string
	// MaxIncreasePercent is the largest perplexity increase over the
	// baseline, in percent, that passes.
	MaxIncreasePercent float64
	// Progress, when set, is told the held-out sentences done.
	Progress func(sentences int)
}

// ReleaseGate compares the candidate model at path with the baseline when
// the candidate's structure allows it (rep is the candidate's report from
// File: the gate does not run when a structural check failed). A baseline
// that fails verification, or a perplexity increase over the limit, fails
// the check; unreadable held-out text is an error.
func ReleaseGate(rep *Report, path string, g Gate) (Check, *gate.Result, error) {
	c := Check{Name: CheckReleaseGate}
	for _, name := range []string{CheckOpens, CheckVocabulary, CheckPrefixClosure, CheckIDs, CheckOrder, CheckValues} {
		if ch := rep.Check(name); ch == nil || ch.Status != Pass {
			c.Status, c.Detail = NotRun, "needs a model whose structure and values hold"
			return c, nil, nil
		}
	}
	if err := g.Baseline.Verify(); err != nil {
		c.Status = Fail
		c.Detail = fmt.Sprintf("the baseline %s fails verification", g.BaselineName)
		c.Problems = []Problem{baselineProblem(err)}
		c.Count = 1
		return c, nil, nil
	}
	cand, err := format.Open(path)
	if err != nil {
		return c, nil, err
	}
	defer cand.Close()
	res, err := gate.CompareWithProgress(cand, g.Baseline, g.HeldoutName, g.Heldout, g.Progress)
	if err != nil {
		return c, nil, fmt.Errorf("--heldout %w", err)
	}
	c.Status = Pass
	c.Detail = fmt.Sprintf("perplexity %.3f against the baseline's %.3f: %+.2f%%, limit %+g%%",
		res.Candidate.Perplexity, res.Baseline.Perplexity, res.IncreasePercent, g.MaxIncreasePercent)
	if !res.Passes(g.MaxIncreasePercent) {
		c.Status = Fail
		c.Count = 1
		c.Problems = []Problem{{Section: "perplexity on " + g.HeldoutName, Offset: -1, Msg: fmt.Sprintf(
			"the candidate's perplexity %.3f is %.2f%% above the baseline's %.3f; at most %g%% is allowed",
			res.Candidate.Perplexity, res.IncreasePercent, res.Baseline.Perplexity, g.MaxIncreasePercent)}}
	}
	return c, res, nil
}

// baselineProblem turns the format reader's verdict on the baseline into a
// problem of the release gate.
func baselineProblem(err error) Problem {
	var fe *format.FormatError
	if errors.As(err, &fe) {
		p := fe.Problem()
		p.Section = "baseline " + p.Section
		return p
	}
	return Problem{Section: "baseline", Offset: -1, Msg: err.Error()}
}
