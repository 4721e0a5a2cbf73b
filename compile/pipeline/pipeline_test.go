package pipeline

import (
	"bytes"
	"compress/gzip"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"ingot/inspect"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

// countFiles writes the counts of the first n corpus sentences as a plain
// text count file and as its gzip form, and returns their paths.
func countFiles(t *testing.T, n int) (plain, gz string) {
	t.Helper()
	dir := t.TempDir()
	var text bytes.Buffer
	if _, err := fixture.Counts(t, 3, fixture.Train(t, n)).WriteTo(&text); err != nil {
		t.Fatal(err)
	}
	plain = filepath.Join(dir, "c.txt")
	gz = filepath.Join(dir, "c.txt.gz")
	var z bytes.Buffer
	zw := gzip.NewWriter(&z)
	zw.Write(text.Bytes())
	zw.Close()
	for p, b := range map[string][]byte{plain: text.Bytes(), gz: z.Bytes()} {
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return plain, gz
}

func sha(t *testing.T, path string) (int64, string) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	s := sha256.Sum256(b)
	return int64(len(b)), hex.EncodeToString(s[:])
}

// The digests recorded are SHA-256 (FIPS 180-4) of each file's bytes as
// stored, compressed ones included, whatever part of them the counts
// reader needed.
func TestLoadCountsDigestsTheStoredBytes(t *testing.T) {
	plain, gz := countFiles(t, 300)
	c, ins, err := LoadCounts(3, []string{plain, gz})
	if err != nil {
		t.Fatal(err)
	}
	if c.Order() != 3 {
		t.Fatalf("order %d", c.Order())
	}
	for i, p := range []string{plain, gz} {
		n, sum := sha(t, p)
		if ins[i] != (tables.Input{Name: p, Bytes: n, SHA256: sum}) {
			t.Errorf("input %d recorded as %+v, want %s: %d bytes, sha256 %s", i, ins[i], p, n, sum)
		}
	}
	// The well-known digest of the empty input (FIPS 180-4 examples).
	empty := filepath.Join(t.TempDir(), "empty")
	os.WriteFile(empty, nil, 0o644)
	in, err := DigestFile(empty)
	if err != nil || in.SHA256 != "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855" {
		t.Errorf("digest of nothing %+v %v", in, err)
	}
}

func compileOptions(method estimate.Method) Compile {
	return Compile{
		Estimate: estimate.Options{Method: method, Order: 3, KatzThreshold: estimate.DefaultKatzThreshold, Discount: 0.5},
		Discount: "0.5", ToolVersion: "test",
		Command: Record([]string{"ingot", "compile", "--method", string(method)}, "", tables.Input{Name: "c.txt", Bytes: 1, SHA256: "ab"}),
	}
}

// Compile records what it did: the options as given, the count cutoffs in
// the history, and the command in the provenance, and the model survives a
// write and a read with all of it.
func TestCompileRecordsHistoryAndProvenance(t *testing.T) {
	c := fixture.Counts(t, 3, fixture.Train(t, 400))
	o := compileOptions(estimate.KneserNey)
	o.MinCount = "3=2"
	res, err := o.Run(c)
	if err != nil {
		t.Fatal(err)
	}
	m := res.Model
	if len(m.Info.History) != 1 || !strings.HasPrefix(m.Info.History[0], "count cutoffs 3=2 (kept ") {
		t.Errorf("history %q", m.Info.History)
	}
	if m.Info.Options["min-count"] != "3=2" || m.Info.Options["method"] != "kneser-ney" || m.Info.Options["order"] != "3" {
		t.Errorf("options %v", m.Info.Options)
	}
	if !res.Report.Orders[2].Cut || res.Report.Orders[2].Kept != m.Len(3) || m.Len(3) >= res.Report.Orders[2].NGrams {
		t.Errorf("report of order 3: %+v, model keeps %d", res.Report.Orders[2], m.Len(3))
	}
	var b bytes.Buffer
	if err := format.Write(&b, m); err != nil {
		t.Fatal(err)
	}
	back, err := format.FromBytes(b.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	if got := back.Info().Commands; len(got) != 1 || got[0].Line != "ingot compile --method kneser-ney" || got[0].Inputs[0].SHA256 != "ab" {
		t.Errorf("commands read back %+v", got)
	}
}

// Counts whose text has no longer n-gram than asked give a model of the
// order they allow; the user is warned and the history says so.
func TestCompileLowersTheOrderToWhatTheCountsHold(t *testing.T) {
	c := fixture.Counts(t, 2, []string{"a b", "b a c"})
	var warned string
	o := compileOptions(estimate.WittenBell)
	o.Warn = func(s string) { warned = s }
	res, err := o.Run(c)
	if err != nil {
		t.Fatal(err)
	}
	// counts.Load refuses counts merely cut short; a counter's counts of
	// order 2 stand for a text whose longest n-gram is 2 long.
	if res.Model.Order() != 2 || res.Estimate.Order != 2 || !strings.Contains(warned, "order 2") ||
		!slices.Contains(res.Model.Info.History, warned) || res.Model.Info.Options["order"] != "2" {
		t.Errorf("order %d, warned %q, history %q, options %v", res.Model.Order(), warned, res.Model.Info.History, res.Model.Info.Options)
	}
}

// A budget is met and recorded; the sizes compared against it include the
// provenance (the written file fits).
func TestCompileToABudgetRecordsIt(t *testing.T) {
	c := fixture.Counts(t, 3, fixture.Train(t, 600))
	full, err := compileOptions(estimate.Katz).Run(c)
	if err != nil {
		t.Fatal(err)
	}
	fullSize, _ := format.Size(full.Model)
	o := compileOptions(estimate.Katz)
	o.MaxSize = "half"
	o.Budget.MaxBytes = fullSize / 2
	o.Command.MaxSize = "half"
	o.Command.Line = strings.Repeat("x", 2000) // a long command line must count too
	res, err := o.Run(c)
	if err != nil {
		t.Fatal(err)
	}
	size, _ := format.Size(res.Model)
	if size+format.SignatureSpace > o.Budget.MaxBytes || res.Fit == nil {
		t.Errorf("%d bytes (+%d for a signature) over the budget %d", size, format.SignatureSpace, o.Budget.MaxBytes)
	}
	if res.Model.Info.Options["max-size"] != "half" || res.Model.Info.Commands[0].MaxSize != "half" {
		t.Errorf("budget not recorded: %v %+v", res.Model.Info.Options, res.Model.Info.Commands)
	}
	o.MinCount = "2=2"
	if _, err := o.Run(c); err == nil {
		t.Error("a budget with count cutoffs was accepted")
	}
	o.MinCount = ""
	o.Budget.MaxBytes = 100
	var be *BudgetError
	if _, err := o.Run(c); !errors.As(err, &be) {
		t.Errorf("a budget of 100 bytes: %v, want a BudgetError", err)
	}
}

// Prune keeps what the model had, adds its own history line and command,
// and refuses a quantized model.
func TestPruneAppendsToTheRecordAndRefusesQuantized(t *testing.T) {
	c := fixture.Counts(t, 3, fixture.Train(t, 400))
	built, err := compileOptions(estimate.Katz).Run(c)
	if err != nil {
		t.Fatal(err)
	}
	full, _ := format.Size(built.Model)
	budget := full * 3 / 4
	step := Record([]string{"ingot", "prune", "--max-size", "3/4"}, "3/4")
	res, err := Prune{MaxBytes: budget, MaxSize: "3/4", Command: step}.Run(built.Model)
	if err != nil {
		t.Fatal(err)
	}
	m := res.Model
	if n := len(m.Info.Commands); n != 2 || m.Info.Commands[1].MaxSize != "3/4" || m.Info.Commands[0].Line != built.Model.Info.Commands[0].Line {
		t.Errorf("commands %+v", m.Info.Commands)
	}
	if len(m.Info.History) != 1 || !strings.HasPrefix(m.Info.History[0], "pruned by relative entropy below ") {
		t.Errorf("history %q", m.Info.History)
	}
	if size, _ := format.Size(m); size+format.SignatureSpace > budget {
		t.Errorf("%d bytes over %d", size, budget)
	}
	if len(built.Model.Info.Commands) != 1 {
		t.Errorf("pruning changed the input's record: %+v", built.Model.Info.Commands)
	}
	q, _, err := Quantize(built.Model, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares}, Record([]string{"ingot", "quantize"}, ""))
	if err != nil || len(q.Info.Commands) != 2 {
		t.Fatalf("quantize: %v, %+v", err, q)
	}
	if _, err := (Prune{DropBelow: 1e-6}).Run(q); !errors.Is(err, ErrQuantized) {
		t.Errorf("prune of a quantized model: %v", err)
	}
	if _, _, err := Quantize(q, quantize.Options{Bits: 8}, tables.Command{}); !errors.Is(err, ErrQuantized) {
		t.Errorf("quantize of a quantized model: %v", err)
	}
}

// A recorded command line reads back, through a POSIX shell, as the words
// it was made of.
func TestCommandLineReadsBackInAShell(t *testing.T) {
	sh, err := exec.LookPath("sh")
	if err != nil {
		t.Fatal("no sh on this machine")
	}
	words := []string{"ingot", "compile", "-o", "a b.ingot", "it's", "", "$HOME", "x;y", "--max-size=2MB", "ü"}
	out, err := exec.Command(sh, "-c", `for w in `+CommandLine(words)+`; do printf '%s\n' "[$w]"; done`).Output()
	if err != nil {
		t.Fatal(err)
	}
	var want strings.Builder
	for _, w := range words {
		want.WriteString("[" + w + "]\n")
	}
	if string(out) != want.String() {
		t.Errorf("%s read back as\n%s", CommandLine(words), out)
	}
	if got := CommandLine([]string{"ingot", "compile", "-o", "m.ingot", "c.txt"}); got != "ingot compile -o m.ingot c.txt" {
		t.Errorf("plain words quoted: %s", got)
	}
}

func TestParseCutoffs(t *testing.T) {
	got, err := ParseCutoffs("3=2, 2=5", 3)
	if err != nil || got[3] != 2 || got[2] != 5 || len(got) != 2 {
		t.Errorf("%v %v", got, err)
	}
	for _, bad := range []string{"1=2", "4=2", "3=0", "3", "a=b"} {
		if _, err := ParseCutoffs(bad, 3); err == nil {
			t.Errorf("%q accepted", bad)
		}
	}
}

// Reports write a number that is not finite as null (JSON has no
// infinities), the one way every report does; keys present only with what
// they describe stay absent otherwise.
func TestReportsWriteNonFiniteAsNull(t *testing.T) {
	tb := fixture.RandomTables(1, 20, []int{30})
	c := Comparison{Baseline: Measured{Scored: true, Perplexity: math.NaN(), PerplexityWithoutUnk: 2}, Result: Measured{Scored: true, Perplexity: math.Inf(1), PerplexityWithoutUnk: 3}}
	r := c.PruneReport("m", math.Inf(1), tb, tb)
	b, err := json.Marshal(r)
	if err != nil {
		t.Fatal(err)
	}
	n := fmt.Sprintf("[%d,%d]", tb.Len(1), tb.Len(2))
	want := `{"baseline_file_bytes":0,"baseline_ngrams":` + n + `,"baseline_perplexity":null,"baseline_perplexity_without_unk":2,"file_bytes":0,"model":"m","ngrams":` + n + `,"perplexity":null,"perplexity_without_unk":3,"threshold":null}`
	if string(b) != want {
		t.Errorf("got  %s\nwant %s", b, want)
	}
	b, _ = json.Marshal(ShrinkReport{Model: "q", Orders: []QuantizedOrder{{Order: 2, ProbStep: inspect.Number(math.NaN())}}})
	if !strings.Contains(string(b), `"prob_step":null`) || strings.Contains(string(b), "threshold") || strings.Contains(string(b), "perplexity") {
		t.Errorf("quantize report %s", b)
	}
}
