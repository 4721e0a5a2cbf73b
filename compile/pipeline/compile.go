// Package pipeline runs ingot's commands as functions: compile counts into
// a model (cutoffs, a fixed vocabulary, a size budget), prune a model to a
// threshold or a budget and quantize it, each recording what it did in the
// model's history and its provenance (command line, budget, SHA-256 of its
// inputs). The command-line tool parses flags, calls these and prints; the
// decisions are here, tested without it.
package pipeline

import (
	"errors"
	"fmt"
	"os"
	"strconv"
	"strings"
	"time"

	"ingot/compile/budget"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/input"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/compile/vocab"
)

// Compile says how to build a model from counts.
type Compile struct {
	// Estimate is the method, the order and the method's parameters.
	Estimate estimate.Options
	// Discount is --discount as given ("auto" or a number), recorded for
	// absolute discounting.
	Discount string
	// MinCount is the count cutoffs as given ("3=2,4=2"), "" for none; see
	// ParseCutoffs.
	MinCount string
	// Vocabulary, when not nil, is the fixed word list the model predicts.
	Vocabulary *vocab.List
	// MaxSize is the size budget as given ("2MB"), "" for none; Budget
	// holds it parsed, with the ranking, quantization and held-out text.
	MaxSize string
	Budget  budget.Options
	// ToolVersion and BuildTime are recorded in the model (BuildTime "" for
	// none: see BuildTime).
	ToolVersion, BuildTime string
	// Command is the provenance of this build, recorded in the model.
	Command tables.Command
	// Progress, when set, is told about each step; Warn about what the
	// user should know (the order lowered to what the counts allow).
	Progress func(step string)
	Warn     func(msg string)
}

// Compiled is what Compile.Run built.
type Compiled struct {
	Model *tables.Tables
	// Report is the estimator's report, with the n-grams kept per order
	// after count cutoffs. Without a budget it is the report of Model.
	Report *estimate.Report
	// Fit is the budget's result (nil without --max-size).
	Fit *budget.Result
	// Estimate is the estimate's options as used: the order is the one the
	// counts allow when they hold less than asked.
	Estimate estimate.Options
}

// Run builds the model from c. The counts may hold a lower order than
// asked when the text has no longer n-gram: the model is then of the order
// the counts allow (Warn is told, and the history says so).
func (o Compile) Run(c *counts.Counts) (*Compiled, error) {
	opt := o.Estimate
	cutoffs, err := ParseCutoffs(o.MinCount, opt.Order)
	if err != nil {
		return nil, err
	}
	var note string
	if c.Order() < opt.Order {
		note = fmt.Sprintf("the counts hold no n-gram above order %d (the text has no longer one): built a model of order %d, the most they allow", c.Order(), c.Order())
		o.warn(note)
		opt.Order = c.Order()
		for k := range cutoffs {
			if k > opt.Order {
				delete(cutoffs, k)
			}
		}
	}
	if o.Vocabulary != nil {
		c = c.MapVocabulary(o.Vocabulary)
	}
	if o.MaxSize != "" {
		if len(cutoffs) > 0 {
			return nil, errors.New("give --max-size or --min-count, not both")
		}
		bo := o.Budget
		bo.Estimate = opt
		bo.Progress = o.Progress
		bo.Describe = func(info *tables.Info) error { o.describe(info, opt); return nil }
		res, err := budget.Fit(c, bo)
		if err != nil {
			return nil, &BudgetError{MaxSize: o.MaxSize, Err: err}
		}
		return &Compiled{Model: res.Model, Report: res.Report, Fit: res, Estimate: opt}, nil
	}
	o.progress(fmt.Sprintf("estimating %s, order %d", opt.Method, opt.Order))
	t, rep, err := estimate.Estimate(c, opt)
	var oe *estimate.OptionError
	if errors.As(err, &oe) {
		return nil, fmt.Errorf("--%s %v: %w", oe.Option, oe.Value, oe.Err)
	}
	if err != nil {
		return nil, err
	}
	if len(cutoffs) > 0 {
		raw := make([][]uint64, opt.Order)
		for k := range raw {
			raw[k] = c.Levels[k].Counts
		}
		keep, err := prune.Cutoffs(t, raw, cutoffs)
		if err != nil {
			return nil, fmt.Errorf("--min-count: %w", err)
		}
		t = prune.Apply(t, keep)
		t.Info.History = append(t.Info.History, fmt.Sprintf(
			"count cutoffs %s (kept %s n-grams per order)", o.MinCount, JoinInts(prune.Kept(keep))))
		for k := range rep.Orders {
			rep.Orders[k].Cut, rep.Orders[k].Kept = true, t.Len(k+1)
		}
	}
	if note != "" {
		t.Info.History = append(t.Info.History, note)
	}
	o.describe(&t.Info, opt)
	return &Compiled{Model: t, Report: rep, Estimate: opt}, nil
}

// BudgetError is a budget that could not be met (a failed check, not bad
// input).
type BudgetError struct {
	MaxSize string
	Err     error
}

func (e *BudgetError) Error() string { return fmt.Sprintf("--max-size %s: %v", e.MaxSize, e.Err) }
func (e *BudgetError) Unwrap() error { return e.Err }

// describe records the build: tool version, time, options as given and the
// provenance.
func (o Compile) describe(info *tables.Info, opt estimate.Options) {
	info.ToolVersion = o.ToolVersion
	info.BuildTime = o.BuildTime
	info.Options = map[string]string{
		"method": string(opt.Method), "order": strconv.Itoa(opt.Order),
	}
	if opt.Method == estimate.Absolute {
		info.Options["discount"] = o.Discount
	}
	if opt.Method == estimate.Katz {
		info.Options["katz-threshold"] = strconv.Itoa(opt.KatzThreshold)
	}
	if o.MinCount != "" {
		info.Options["min-count"] = o.MinCount
	}
	if o.Vocabulary != nil {
		info.Options["vocabulary"] = fmt.Sprintf("%d words, sha256 %s", o.Vocabulary.Len(), o.Vocabulary.Digest())
	}
	if o.MaxSize != "" {
		info.Options["max-size"] = o.MaxSize
	}
	info.Commands = append(info.Commands[:len(info.Commands):len(info.Commands)], o.Command)
}

func (o Compile) progress(s string) {
	if o.Progress != nil {
		o.Progress(s)
	}
}

func (o Compile) warn(s string) {
	if o.Warn != nil {
		o.Warn(s)
	}
}

// ParseDiscount reads --discount: "auto" (n1/(n1+2 n2) per order) or a
// number in (0, 1), set into opt.
func ParseDiscount(s string, opt *estimate.Options) error {
	if s == "auto" {
		opt.AutoDiscount = true
		return nil
	}
	d, err := strconv.ParseFloat(s, 64)
	if err != nil || !(d > 0 && d < 1) {
		return fmt.Errorf("--discount %q must be a number in (0, 1) or auto", s)
	}
	opt.Discount = d
	return nil
}

// ParseCutoffs reads count cutoffs "K=M[,K=M...]": drop n-grams of order K
// (2..order) seen fewer than M (>= 1) times. "" is none (nil).
func ParseCutoffs(s string, order int) (map[int]uint64, error) {
	if s == "" {
		return nil, nil
	}
	out := map[int]uint64{}
	for _, part := range strings.Split(s, ",") {
		ks, ms, ok := strings.Cut(strings.TrimSpace(part), "=")
		k, err1 := strconv.Atoi(ks)
		m, err2 := strconv.ParseUint(ms, 10, 64)
		if !ok || err1 != nil || err2 != nil || m < 1 {
			return nil, fmt.Errorf("--min-count %q: want K=M pairs such as 3=2,4=2", s)
		}
		if k < 2 || k > order {
			return nil, fmt.Errorf("--min-count: order %d cannot be cut (orders 2..%d; for rare words use count --min-word-count)", k, order)
		}
		out[k] = m
	}
	return out, nil
}

// JoinInts writes numbers as "a/b/c", the way history lines give n-grams
// per order.
func JoinInts(xs []int) string {
	s := make([]string, len(xs))
	for i, x := range xs {
		s[i] = strconv.Itoa(x)
	}
	return strings.Join(s, "/")
}

// LoadCounts reads count files (see counts.Load; "-" is standard input)
// and returns, with the counts, each file's length and SHA-256 digest as
// stored, for the model's provenance.
func LoadCounts(order int, names []string) (*counts.Counts, []tables.Input, error) {
	in, err := openHashedInputs(names)
	if err != nil {
		return nil, nil, err
	}
	defer in.close()
	c, err := counts.Load(order, in.sources)
	if err != nil {
		return nil, nil, err
	}
	ins, err := in.digests()
	if err != nil {
		return nil, nil, err
	}
	return c, ins, nil
}

// hashedInputs are count files open for reading, each digested as it is
// read (input.Hashed).
type hashedInputs struct {
	names   []string
	sources []counts.Source
	hashed  []*input.Hashed
}

// openHashedInputs opens the named count files; on an error it closes those
// it opened.
func openHashedInputs(names []string) (*hashedInputs, error) {
	in := &hashedInputs{names: names}
	for _, name := range names {
		h, err := input.OpenRegularHashed(name)
		if err != nil {
			in.close()
			return nil, err
		}
		in.hashed = append(in.hashed, h)
		in.sources = append(in.sources, counts.Source{Name: inputName(name), R: h})
	}
	return in, nil
}

func (in *hashedInputs) close() {
	for _, h := range in.hashed {
		h.Close()
	}
}

// digests returns each file's length and SHA-256 digest, once read.
func (in *hashedInputs) digests() ([]tables.Input, error) {
	ins := make([]tables.Input, len(in.names))
	for i, h := range in.hashed {
		n, sum, err := h.Digest()
		if err != nil {
			return nil, fmt.Errorf("%s: %w", inputName(in.names[i]), err)
		}
		ins[i] = tables.Input{Name: inputName(in.names[i]), Bytes: n, SHA256: sum}
	}
	return ins, nil
}

// BuildTime returns the build time that SOURCE_DATE_EPOCH fixes (seconds
// since 1970, the reproducible-builds convention), or "" when it is unset:
// models record no time of their own, so the same inputs give the same
// bytes.
func BuildTime() (string, error) {
	s, ok := os.LookupEnv("SOURCE_DATE_EPOCH")
	if !ok || s == "" {
		return "", nil
	}
	sec, err := strconv.ParseInt(s, 10, 64)
	if err != nil || sec < 0 {
		return "", fmt.Errorf("SOURCE_DATE_EPOCH=%q is not a number of seconds since 1970", s)
	}
	return time.Unix(sec, 0).UTC().Format(time.RFC3339), nil
}
