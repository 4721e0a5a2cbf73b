package verify

import (
	"crypto/ed25519"
	"crypto/rand"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/format"
)

func writeModel(t *testing.T, data []byte) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "m.ingot")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// The signature check passes for the signer's key and fails, at the key
// id inside the signature section, for another key; an unsigned model
// fails it too.
func TestSignatureCheck(t *testing.T) {
	data := marshal3(t, fixture.Estimate(t, fixture.Train(t, 200), 2, estimate.Options{Method: estimate.WittenBell}))
	pub, priv, _ := ed25519.GenerateKey(rand.Reader)
	other, _, _ := ed25519.GenerateKey(rand.Reader)
	if c := Signature(writeModel(t, data), pub); c.Status != Fail || !strings.Contains(c.Detail, "not signed") {
		t.Errorf("unsigned: %+v", c)
	}
	signed, err := format.Sign(data, priv)
	if err != nil {
		t.Fatal(err)
	}
	path := writeModel(t, signed)
	if c := Signature(path, pub); c.Status != Pass || c.Name != CheckSignature {
		t.Errorf("signer's key: %+v", c)
	}
	m, err := format.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	at := int64(-1)
	for _, s := range m.Sections() {
		if s.Kind == format.KindSignature {
			at = s.Offset
		}
	}
	c := Signature(path, other)
	if c.Status != Fail || len(c.Problems) != 1 || c.Problems[0].Section != "signature" || c.Problems[0].Offset != at+8 {
		t.Errorf("another key: %+v, want one problem at %d, the key id in the section at %d", c, at+8, at)
	}
}

// The release gate passes a model against itself, fails one whose
// perplexity rises beyond the limit and one whose baseline is damaged,
// and does not run on a candidate whose structure failed.
func TestReleaseGate(t *testing.T) {
	train, held := fixture.SOTU(t, 1500)
	text := strings.Join(held, "\n")
	good := marshal3(t, fixture.Estimate(t, train, 3, estimate.Options{Method: estimate.KneserNey}))
	worse := marshal3(t, fixture.Estimate(t, train[:len(train)/10], 3, estimate.Options{Method: estimate.KneserNey}))
	gateOn := func(candidate, baseline []byte, limit float64) Check {
		t.Helper()
		path := writeModel(t, candidate)
		rep := run(t, candidate, Options{})
		base, err := format.FromBytes(baseline)
		if err != nil {
			t.Fatal(err)
		}
		c, _, err := ReleaseGate(rep, path, Gate{Baseline: base, BaselineName: "old", Heldout: strings.NewReader(text), HeldoutName: "held", MaxIncreasePercent: limit})
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	if c := gateOn(good, good, 0); c.Status != Pass {
		t.Errorf("a model against itself: %+v", c)
	}
	if c := gateOn(worse, good, 1); c.Status != Fail || c.Problems[0].Section != "perplexity on held" || c.Problems[0].Offset != -1 {
		t.Errorf("a model trained on a tenth of the text: %+v", c)
	}
	if c := gateOn(good, worse, 1); c.Status != Pass {
		t.Errorf("a better model: %+v", c)
	}
	bad := append([]byte(nil), good...)
	words, _ := where(t, bad, format.KindWordText, 0)
	words[0] ^= 0xff // the checksum of the word text no longer holds
	if c := gateOn(good, bad, 1); c.Status != Fail || !strings.HasPrefix(c.Problems[0].Section, "baseline ") || c.Problems[0].Offset <= 0 {
		t.Errorf("a damaged baseline: %+v", c)
	}
	rep := run(t, bad, Options{})
	base, _ := format.FromBytes(good)
	if c, res, err := ReleaseGate(rep, writeModel(t, bad), Gate{Baseline: base, Heldout: strings.NewReader(text)}); c.Status != NotRun || res != nil || err != nil {
		t.Errorf("a damaged candidate: %+v %v", c, err)
	}
}
