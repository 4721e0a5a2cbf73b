package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// verifyFixture builds, from the demo's invented commands, a kneser-ney
// model of order 3 and one of order 1, and writes the held-out text.
func verifyFixture(t *testing.T) (dir, good, unigram, heldout string) {
	t.Helper()
	dir = t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	heldout = writeFile(t, dir, "heldout.txt", demoHeldout)
	counts := filepath.Join(dir, "c.tsv")
	if code, _, e := ingot(t, "count", "--order", "3", "-o", counts, text); code != 0 {
		t.Fatal(e)
	}
	good, unigram = filepath.Join(dir, "good.ingot"), filepath.Join(dir, "unigram.ingot")
	for path, order := range map[string]string{good: "3", unigram: "1"} {
		if code, _, e := ingot(t, "compile", "--method", "kneser-ney", "--order", order, "-o", path, counts); code != 0 {
			t.Fatal(e)
		}
	}
	return dir, good, unigram, heldout
}

type verifyOutput struct {
	OK              bool     `json:"ok"`
	Failed          []string `json:"failed"`
	ContextsChecked int      `json:"contexts_checked"`
	MaxAbsDeviation *float64 `json:"max_abs_deviation"`
	Checks          []struct {
		Name, Status, Detail string
		Problems             []struct{ Section, Message string }
	} `json:"checks"`
	WorstContexts      []struct{ Context []string } `json:"worst_contexts"`
	DeviationHistogram []struct{ Contexts int }     `json:"deviation_histogram"`
	ReleaseGate        *struct {
		PerplexityIncreasePercent float64 `json:"perplexity_increase_percent"`
		NGramsAdded               int     `json:"ngrams_added"`
		NGramsRemoved             int     `json:"ngrams_removed"`
		NGramsChanged             int     `json:"ngrams_changed"`
		MeanKLNats                float64 `json:"mean_kl_nats"`
		Passed                    bool    `json:"passed"`
	} `json:"release_gate"`
}

func verifyJSON(t *testing.T, args ...string) (int, verifyOutput, string) {
	t.Helper()
	code, out, e := ingot(t, append([]string{"verify", "--json"}, args...)...)
	var v verifyOutput
	if err := json.Unmarshal([]byte(out), &v); err != nil {
		t.Fatalf("verify --json %v: %v\n%s", args, err, out)
	}
	return code, v, e
}

func TestVerifyCommand(t *testing.T) {
	dir, good, _, _ := verifyFixture(t)

	code, out, e := ingot(t, "verify", good)
	if code != 0 || !strings.Contains(out, ": ok") || !strings.Contains(out, "worst contexts") || e != "" {
		t.Fatalf("verify: exit %d, stderr %q\n%s", code, e, out)
	}

	code, v, _ := verifyJSON(t, good)
	if code != 0 || !v.OK || v.ContextsChecked < 10 || v.MaxAbsDeviation == nil || *v.MaxAbsDeviation > 1e-5 ||
		len(v.Checks) != 13 || len(v.WorstContexts) != 10 || len(v.DeviationHistogram) != 8 || len(v.Failed) != 0 {
		t.Errorf("verify --json: exit %d, %+v", code, v)
	}
	for _, c := range v.Checks {
		if c.Name == "" || (c.Status != "pass" && c.Status != "not run") {
			t.Errorf("check %+v", c)
		}
	}

	// A flipped bit: exit 1, the one-line message names the check and the
	// damaged section.
	data, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	data[len(data)/2] ^= 0x08
	damaged := filepath.Join(dir, "damaged.ingot")
	if err := os.WriteFile(damaged, data, 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, e = ingot(t, "verify", damaged)
	if code != 1 || !strings.Contains(e, "failed checksums") || !strings.Contains(e, " of order ") || strings.Count(e, "\n") != 1 || !strings.Contains(out, "FAILED") {
		t.Errorf("damaged: exit %d, stderr %q\n%s", code, e, out)
	}
	code, v, _ = verifyJSON(t, damaged)
	if code != 1 || v.OK || v.Failed[0] != "checksums" || v.MaxAbsDeviation != nil {
		t.Errorf("damaged --json: exit %d, %+v", code, v)
	}

	// Truncated: still recognisably a model, so a failed check.
	truncated := writeFile(t, dir, "truncated.ingot", string(data[:len(data)/3]))
	if code, _, e = ingot(t, "verify", truncated); code != 1 || !strings.Contains(e, "truncated") {
		t.Errorf("truncated: exit %d, %q", code, e)
	}
}

func TestVerifyBadUsageExitsTwo(t *testing.T) {
	dir, good, _, heldout := verifyFixture(t)
	text := writeFile(t, dir, "notes.txt", "turn the beacon on\n")
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"verify", filepath.Join(dir, "missing.ingot")}, "missing.ingot"},
		{[]string{"verify", text}, "not a readable ingot model"},
		{[]string{"verify"}, "argument(s) given; usage: ingot "},
		{[]string{"verify", "--tolerance", "-1", good}, "--tolerance -1 must be a number above 0"},
		{[]string{"verify", "--baseline", good, good}, "needs both --baseline and --heldout"},
		{[]string{"verify", "--max-perplexity-increase", "2", good}, "--max-perplexity-increase needs --baseline"},
		{[]string{"verify", "--baseline", text, "--heldout", heldout, good}, "notes.txt"},
		{[]string{"verify", "--baseline", good, "--heldout", filepath.Join(dir, "none.txt"), good}, "none.txt"},
	} {
		code, _, e := ingot(t, c.args...)
		if code != 2 || !strings.Contains(e, c.want) || strings.Count(e, "\n") != 1 {
			t.Errorf("%v: exit %d, stderr %q; want exit 2 and %q", c.args, code, e, c.want)
		}
	}
}

func TestVerifyReleaseGate(t *testing.T) {
	_, good, unigram, heldout := verifyFixture(t)

	code, v, e := verifyJSON(t, good, "--baseline", good, "--heldout", heldout)
	g := v.ReleaseGate
	if code != 0 || g == nil || !g.Passed || g.NGramsAdded+g.NGramsRemoved+g.NGramsChanged != 0 || g.MeanKLNats != 0 || g.PerplexityIncreasePercent != 0 {
		t.Fatalf("same model: exit %d, %s, %+v", code, e, g)
	}
	if last := v.Checks[len(v.Checks)-1]; last.Name != "release-gate" || last.Status != "pass" {
		t.Errorf("last check %+v", last)
	}

	code, out, e := ingot(t, "verify", unigram, "--baseline", good, "--heldout", heldout)
	if code != 1 || !strings.Contains(e, "failed release-gate") || !strings.Contains(out, "release gate") {
		t.Errorf("order 1 against order 3: exit %d, stderr %q\n%s", code, e, out)
	}
	// A limit the regression fits under lets it pass.
	if code, _, e := ingot(t, "verify", unigram, "--baseline", good, "--heldout", heldout, "--max-perplexity-increase", "100000"); code != 0 {
		t.Errorf("generous limit: exit %d, %s", code, e)
	}
}

// verify on a binary count file reads every block as compile does: an
// intact file passes (exit 0, the count report's JSON keys), a changed
// byte fails the blocks check naming its offset (exit 1), and a model's
// options are refused (exit 2).
func TestVerifyCountFile(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	cnt := filepath.Join(dir, "c.bin")
	if code, _, e := ingot(t, "count", "--order", "3", "-o", cnt, text); code != 0 {
		t.Fatal(e)
	}
	code, out, e := ingot(t, "verify", "--json", cnt)
	var v struct {
		OK     bool     `json:"ok"`
		Failed []string `json:"failed"`
		Checks []struct {
			Name, Status string
		} `json:"checks"`
		Order  int      `json:"order"`
		NGrams []uint64 `json:"ngrams"`
	}
	if err := json.Unmarshal([]byte(out), &v); err != nil || code != 0 || !v.OK || v.Order != 3 || len(v.NGrams) != 3 || len(v.Checks) != 2 {
		t.Fatalf("intact: exit %d, %+v, %v\n%s%s", code, v, err, out, e)
	}
	b, _ := os.ReadFile(cnt)
	b[len(b)/2] ^= 1
	bad := writeFile(t, dir, "bad.bin", string(b))
	code, out, e = ingot(t, "verify", bad)
	if code != 1 || !strings.Contains(out, "FAILED (blocks)") || !strings.Contains(e, "at offset") {
		t.Errorf("damaged: exit %d\n%s%s", code, out, e)
	}
	if code, _, e := ingot(t, "verify", "--tolerance", "1e-3", cnt); code != 2 || !strings.Contains(e, "count file") {
		t.Errorf("--tolerance on a count file: exit %d, %s", code, e)
	}
}

// verify on a text count file says what the file is and where it is
// checked, instead of calling it a damaged model (exit 2).
func TestVerifyTextCountFile(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	cnt := filepath.Join(dir, "c.tsv")
	if code, _, e := ingot(t, "count", "--order", "2", "--text", "-o", cnt, text); code != 0 {
		t.Fatal(e)
	}
	code, _, e := ingot(t, "verify", cnt)
	if code != 2 || !strings.Contains(e, "is a text count file") {
		t.Errorf("exit %d, %s", code, e)
	}
	other := writeFile(t, dir, "notes.txt", "not a model\n")
	if code, _, e := ingot(t, "verify", other); code != 2 || strings.Contains(e, "count file") || !strings.Contains(e, "not a readable ingot model") {
		t.Errorf("a text file: exit %d, %s", code, e)
	}
}
