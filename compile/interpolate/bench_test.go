package interpolate

import (
	"fmt"
	"ingot/compile/fixture"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sync"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/verify"
)

// benchDir holds the benchmark models; removed when the benchmarks end.
var benchDir = sync.OnceValues(func() (string, error) { return os.MkdirTemp("", "ingot-interpolate-bench-") })

var benchFiles sync.Map // sentences -> [2]string

// benchModels writes, once per size, two 5-gram models of the first n
// sentences of the bundled corpus (modified Kneser-Ney and Witten-Bell:
// the same n-grams, different values) and returns their paths.
func benchModels(b *testing.B, n int) [2]string {
	if v, ok := benchFiles.Load(n); ok {
		return v.([2]string)
	}
	dir, err := benchDir()
	if err != nil {
		b.Fatal(err)
	}
	all := sentences(b)
	var paths [2]string
	for i, m := range []estimate.Method{estimate.KneserNey, estimate.WittenBell} {
		t := build(b, all[:n], 5, m)
		data, err := format.Marshal(t)
		if err != nil {
			b.Fatal(err)
		}
		paths[i] = filepath.Join(dir, fmt.Sprintf("%d-%s.ingot", n, m))
		if err := os.WriteFile(paths[i], data, 0o644); err != nil {
			b.Fatal(err)
		}
	}
	benchFiles.Store(n, paths)
	return paths
}

// interpolateFiles is what ingot interpolate --weights does: read the
// models through the format's reader, build the mixture, write it.
func interpolateFiles(paths []string, weights []float64, out string) (*tables.Tables, error) {
	var models []*tables.Tables
	for _, p := range paths {
		m, err := format.Open(p)
		if err != nil {
			return nil, err
		}
		t, err := format.ToTables(m)
		m.Close()
		if err != nil {
			return nil, err
		}
		models = append(models, t)
	}
	mix, err := New(models)
	if err != nil {
		return nil, err
	}
	t, err := mix.Build(weights, paths)
	if err != nil {
		return nil, err
	}
	f, err := os.Create(out)
	if err != nil {
		return nil, err
	}
	if err := format.Write(f, t); err != nil {
		f.Close()
		return nil, err
	}
	return t, f.Close()
}

func median(d []time.Duration) time.Duration {
	s := slices.Clone(d)
	slices.Sort(s)
	return s[len(s)/2]
}

// BenchmarkInterpolate interpolates two 5-gram models of the bundled corpus
// (half of it and all of it, to show the time is linear in the n-grams) and,
// in the same loop, verifies the larger input: "x_verify" is the ratio of
// the medians, interpolate over verify (the target: at most 10).
func BenchmarkInterpolate(b *testing.B) {
	all := sentences(b)
	for _, n := range []int{len(all) / 2, len(all)} {
		b.Run(fmt.Sprintf("sentences=%d", n), func(b *testing.B) {
			paths := benchModels(b, n)
			dir, _ := benchDir()
			out := filepath.Join(dir, "mix.ingot")
			var tv, ti []time.Duration
			ngrams := 0
			for b.Loop() {
				t0 := time.Now()
				rep, err := verify.File(paths[0], verify.Options{})
				if err != nil || !rep.OK() {
					b.Fatalf("verify: %v", err)
				}
				t1 := time.Now()
				t, err := interpolateFiles(paths[:], []float64{0.5, 0.5}, out)
				if err != nil {
					b.Fatal(err)
				}
				t2 := time.Now()
				tv, ti = append(tv, t1.Sub(t0)), append(ti, t2.Sub(t1))
				ngrams = 0
				for k := 1; k <= t.Order(); k++ {
					ngrams += t.Len(k)
				}
			}
			b.ReportMetric(float64(median(ti).Nanoseconds())/float64(ngrams), "ns/ngram")
			b.ReportMetric(float64(median(tv).Nanoseconds())/float64(ngrams), "verify-ns/ngram")
			b.ReportMetric(float64(median(ti))/float64(median(tv)), "x_verify")
			b.ReportMetric(float64(ngrams), "ngrams")
		})
	}
}

func TestMain(m *testing.M) {
	code := m.Run()
	if dir, err := benchDir(); err == nil {
		os.RemoveAll(dir)
	}
	os.Exit(code)
}

// BenchmarkAdaptation measures the accuracy targets on the bundled
// corpus at order 5: a general model of all addresses but the most recent
// 6,000 sentences, a domain model of nine tenths of those, the weights fitted
// on 300 of the held-out tenth and the perplexities measured on the other
// 300. It reports the EM weight of the general model and the optimum a
// golden-section search finds ("weight_gap", the target is at most 0.02),
// and the written model's perplexity against the exact mixture's at the
// same weights ("written_vs_mixture_%", the target is within 2%).
func BenchmarkAdaptation(b *testing.B) {
	all := sentences(b)
	recent := all[len(all)-6000:]
	train, held := corpus.Split(recent, 0)
	general := build(b, all[:len(all)-6000], 5, estimate.KneserNey)
	dom := build(b, train, 5, estimate.KneserNey)
	fit, test := fixture.Tokens(held[:300]), fixture.Tokens(held[300:])
	var w []float64
	var best, mix, written, pg, pd float64
	for b.Loop() {
		m, err := New([]*tables.Tables{general, dom})
		if err != nil {
			b.Fatal(err)
		}
		h := m.Score(fit)
		if w, _, err = h.Fit(); err != nil {
			b.Fatal(err)
		}
		best = goldenSection(func(a float64) float64 { return h.LogLikelihood([]float64{a, 1 - a}) }, 0, 1, 1e-7)
		out, err := m.Build(w, nil)
		if err != nil {
			b.Fatal(err)
		}
		ht := m.Score(test)
		mix, pg, pd = ht.Perplexity(w), ht.Perplexity(Unit(2, 0)), ht.Perplexity(Unit(2, 1))
		wm, err := New([]*tables.Tables{out})
		if err != nil {
			b.Fatal(err)
		}
		written = wm.Score(test).Perplexity([]float64{1})
	}
	b.ReportMetric(w[0], "em_weight")
	b.ReportMetric(best, "search_weight")
	b.ReportMetric(math.Abs(w[0]-best), "weight_gap")
	b.ReportMetric(pg, "general_ppl")
	b.ReportMetric(pd, "domain_ppl")
	b.ReportMetric(mix, "mixture_ppl")
	b.ReportMetric(written, "written_ppl")
	b.ReportMetric(100*(written/mix-1), "written_vs_mixture_%")
}
