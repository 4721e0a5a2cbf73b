package pipeline

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/format"
	"ingot/format/score"
)

// writeModel estimates a trigram Kneser-Ney model of sentences and writes
// it to dir/name.
func writeModel(t *testing.T, dir, name string, sentences []string) string {
	t.Helper()
	m := fixture.Estimate(t, sentences, 3, estimate.Options{Method: estimate.KneserNey})
	path := filepath.Join(dir, name)
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := format.Write(f, m); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

// Measure gives the file's size and the held-out perplexity by its
// definition, 10^(-(sum of log10 P)/N) over the N predictions (N - <unk>
// predictions without <unk>), summed here from the per-token log10 the
// model gives.
func TestMeasure(t *testing.T) {
	dir := t.TempDir()
	demo := fixture.Demo(t)
	path := writeModel(t, dir, "m.ingot", demo[:len(demo)*9/10])
	held := append(append([]string{}, demo[len(demo)*9/10:]...), "turn the zebra off")
	heldPath := filepath.Join(dir, "held.txt")
	if err := os.WriteFile(heldPath, []byte(strings.Join(held, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	st, _ := os.Stat(path)

	bare, err := Measure(path, "")
	if err != nil || bare.Scored || bare.FileBytes != st.Size() || !math.IsNaN(bare.Perplexity) {
		t.Fatalf("without held-out text: %+v, %v", bare, err)
	}
	got, err := Measure(path, heldPath)
	if err != nil || !got.Scored || got.FileBytes != st.Size() {
		t.Fatalf("with held-out text: %+v, %v", got, err)
	}
	m, err := format.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	sc := score.NewScorer(m)
	var sum, sumKnown float64
	var n, nKnown int
	for _, toks := range fixture.Tokens(held) {
		s := sc.Score(toks)
		for i, lp := range s.Log10 {
			sum += lp
			n++
			if s.Tokens[i] != "<unk>" {
				sumKnown += lp
				nKnown++
			}
		}
	}
	if nKnown == n {
		t.Fatal("the held-out text has no <unk> prediction")
	}
	want, wantKnown := math.Pow(10, -sum/float64(n)), math.Pow(10, -sumKnown/float64(nKnown))
	if math.Abs(got.Perplexity/want-1) > 1e-12 || math.Abs(got.PerplexityWithoutUnk/wantKnown-1) > 1e-12 {
		t.Errorf("perplexity %v and %v without <unk>, want %v and %v", got.Perplexity, got.PerplexityWithoutUnk, want, wantKnown)
	}
	sents, err := ReadSentences(heldPath)
	if err != nil || len(sents) != len(held) {
		t.Fatalf("ReadSentences: %d sentences, %v", len(sents), err)
	}
	if p := Perplexity(m, sents); math.Abs(p/want-1) > 1e-12 {
		t.Errorf("Perplexity %v, want %v", p, want)
	}

	c := Comparison{Baseline: got, Result: Measured{FileBytes: 10, Scored: true, Perplexity: got.Perplexity * 1.5, PerplexityWithoutUnk: 1}}
	if ch := c.PerplexityChange(); math.Abs(ch-50) > 1e-9 {
		t.Errorf("change %v%%, want 50%%", ch)
	}
	r := c.Report("out")
	if r.Perplexity == nil || float64(*r.BaselinePerplexity) != got.Perplexity || r.BaselineFileBytes != st.Size() || r.FileBytes != 10 {
		t.Errorf("report %+v", r)
	}
	if r := (Comparison{Baseline: bare, Result: bare}).Report("out"); r.Perplexity != nil || r.BaselinePerplexity != nil {
		t.Errorf("perplexities reported without held-out text: %+v", r)
	}
	if _, err := ReadSentences(filepath.Join(dir, "absent.txt")); err == nil {
		t.Error("a missing text read")
	}
}
