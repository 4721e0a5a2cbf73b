package ctest

import (
	"bytes"
	"crypto/ed25519"
	"encoding/binary"
	"ingot/compile/fixture"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/compile/text"
	"ingot/format"
	"ingot/format/score"
	"ingot/quantize"
)

// sotuSentences is how much of the bundled State of the Union text (CC0)
// the models are built from: enough for every order to be reached often,
// small enough for CI.
const sotuSentences = 4000

// testModel is a model file written to disk.
type testModel struct {
	name string
	path string
	data []byte
}

var (
	sotuOnce   sync.Once
	sotuModels []testModel
	sotuHeld   string
	sotuErr    error
)

// corpusModels returns the float, 8-bit and pruned 4-bit 4-gram models of
// the training part of the first sotuSentences sentences of the bundled
// corpus, and its held-out part as text.
func corpusModels(t testing.TB) ([]testModel, string) {
	t.Helper()
	sotuOnce.Do(func() {
		sotuErr = func() error {
			all, err := corpus.SOTU()
			if err != nil {
				return err
			}
			train, held := corpus.Split(all, sotuSentences)
			sotuHeld = strings.Join(held, "\n") + "\n"
			tb, err := fixture.EstimateText(train, 4, estimate.Options{Method: estimate.KneserNey})
			if err != nil {
				return err
			}
			q8, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
			if err != nil {
				return err
			}
			total := 0
			for k := 1; k <= tb.Order(); k++ {
				total += tb.Len(k)
			}
			_, keep, err := prune.KeepAtMost(tb, prune.EntropyScores(tb), total/3)
			if err != nil {
				return err
			}
			pr := prune.Select(tb, keep)
			prune.Renormalize(pr)
			p4, _, err := quantize.Model(pr, quantize.Options{Bits: 4, Trainer: quantize.LeastSquares})
			if err != nil {
				return err
			}
			dir, err := os.MkdirTemp("", "ingot-ctest-models-")
			if err != nil {
				return err
			}
			for _, m := range []struct {
				name string
				tb   *tables.Tables
			}{{"float", tb}, {"8-bit", q8}, {"pruned 4-bit", p4}} {
				data, err := format.Marshal(m.tb)
				if err != nil {
					return err
				}
				path := filepath.Join(dir, strings.ReplaceAll(m.name, " ", "-")+".ingot")
				if err := os.WriteFile(path, data, 0o644); err != nil {
					return err
				}
				sotuModels = append(sotuModels, testModel{m.name, path, data})
			}
			return nil
		}()
	})
	if sotuErr != nil {
		t.Fatal(sotuErr)
	}
	return sotuModels, sotuHeld
}

// goScores scores text with the Go reader (format/score, what 'ingot
// score --json' prints), one slice of log10 values per sentence.
func goScores(t testing.TB, data []byte, body string) [][]float64 {
	t.Helper()
	m, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	// The Scorer, not score.Text: held-out text refuses markers as count
	// does, and the edge cases hold markers to see that the C reader scores
	// them as the Go Scorer does (as <unk>).
	var out [][]float64
	sc := score.NewScorer(m)
	err = text.Sentences("text", strings.NewReader(body), true, func(toks []string, _ int) error {
		out = append(out, append([]float64(nil), sc.Score(toks).Log10...))
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// edgeText holds what a careless user's text holds: blank lines, runs of
// spaces and tabs, CRLF endings, Unicode white space (no-break space,
// ideographic space), the markers as tokens, words outside the vocabulary
// and a last line without its newline.
const edgeText = "the president\r\n\n   \t \n  the   congress\tof  the united states \n" +
	"<s> the <unk> </s> nation\n" +
	"the\u00a0people\u3000of the\u2028world\n" +
	"zyzzyva qwertyuiop the\r\n" +
	"\u00e9t\u00e9 na\u00efve caf\u00e9\n" +
	"the last line"

// compareScores checks the C program's output against the Go scores.
func compareScores(t *testing.T, out string, want [][]float64) {
	t.Helper()
	lines := strings.Split(strings.TrimSuffix(out, "\n"), "\n")
	if len(lines) != len(want) {
		t.Fatalf("%d lines for %d sentences", len(lines), len(want))
	}
	worst := 0.0
	for i, line := range lines {
		fields := strings.Split(line, " ")
		if len(fields) != len(want[i]) {
			t.Fatalf("sentence %d: %d values, want %d: %q", i+1, len(fields), len(want[i]), line)
		}
		for j, f := range fields {
			got, w := parseC(t, f), want[i][j]
			if math.IsInf(w, -1) && math.IsInf(got, -1) {
				continue
			}
			d := math.Abs(got - w)
			if !(d <= 1e-6) {
				t.Fatalf("sentence %d, prediction %d: C %v, Go %v", i+1, j+1, got, w)
			}
			worst = max(worst, d)
		}
	}
	t.Logf("%d sentences, largest difference %.3g", len(lines), worst)
}

// The example program's answers equal the Go reader's within 1e-6 on the
// float, 8-bit and pruned 4-bit models of the bundled corpus, for held-out
// text and for awkward text, built plainly and with the sanitizers.
func TestScoresEqualGoReader(t *testing.T) {
	p := tools(t)
	models, held := corpusModels(t)
	for _, m := range models {
		for _, text := range []struct{ name, text string }{{"held-out", held}, {"edge cases", edgeText}} {
			want := goScores(t, m.data, text.text)
			for _, sanitizer := range []bool{false, true} {
				prog := p.score
				name := m.name + "/" + text.name
				if sanitizer {
					prog, name = p.scoreASan, name+"/sanitized"
				}
				t.Run(name, func(t *testing.T) {
					r := run(t, text.text, sanitizer, prog, m.path)
					if r.code != 0 {
						t.Fatalf("exit %d: %s", r.code, r.stderr)
					}
					compareScores(t, r.stdout, want)
				})
			}
		}
	}
	// The models really are of three kinds.
	for i, want := range []uint32{3, 3, 3} { // what Write writes: version 3
		if v := le32(models[i].data[8:]); v != want {
			t.Errorf("%s model: format version %d, want %d", models[i].name, v, want)
		}
	}
	// The 8-bit model's widened back-off weights are stored tiered
	// (spec/FORMAT.md 4.8.6), so the comparison above read them through
	// the escape counters.
	if len(narrowWidths(models[1].data, 7)) == 0 {
		t.Error("8-bit model: no back-off column tiered")
	}
}

// narrowWidths counts the sections of a kind with encoding 6 (tiered) by
// their narrow width b.
func narrowWidths(data []byte, kind uint32) map[uint32]int {
	out := map[uint32]int{}
	s := le32(data[12:])
	for j := range s {
		e := data[64+32*j:]
		if le32(e) == kind && le32(e[4:]) == 6 {
			off := binary.LittleEndian.Uint64(e[16:])
			out[le32(data[off+4:])]++
		}
	}
	return out
}

func le32(b []byte) uint32 {
	return uint32(b[0]) | uint32(b[1])<<8 | uint32(b[2])<<16 | uint32(b[3])<<24
}

// demoModels are the corruption matrix's models (as in verify's tests): a
// 3-gram Kneser-Ney model of the first 40 sentences of the invented demo
// text, plain and 4-bit quantized with both kinds of codebook, each in
// version 3 (what Write writes) and in the tables layout (versions 1 and
// 2), and signed.
func demoModels(t *testing.T) []testModel {
	t.Helper()
	tb := fixture.Estimate(t, fixture.Demo(t)[:40], 3, estimate.Options{Method: estimate.KneserNey})
	plain, err := format.Marshal(tb)
	if err != nil {
		t.Fatal(err)
	}
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 4, Trainer: quantize.EqualMass})
	if err != nil {
		t.Fatal(err)
	}
	quantized, err := format.Marshal(q)
	if err != nil {
		t.Fatal(err)
	}
	signed, err := format.Sign(plain, ed25519.NewKeyFromSeed(bytes.Repeat([]byte{0x2a}, ed25519.SeedSize)))
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	plain1, err := format.MarshalVersion(tb, 1)
	if err != nil {
		t.Fatal(err)
	}
	quantized2, err := format.MarshalVersion(q, 2)
	if err != nil {
		t.Fatal(err)
	}
	var out []testModel
	for _, m := range []testModel{{"plain", "", plain}, {"quantized", "", quantized}, {"signed", "", signed},
		{"plain-v1", "", plain1}, {"quantized-v2", "", quantized2}} {
		m.path = filepath.Join(dir, m.name+".ingot")
		if err := os.WriteFile(m.path, m.data, 0o644); err != nil {
			t.Fatal(err)
		}
		out = append(out, m)
	}
	return out
}
