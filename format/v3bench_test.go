package format_test

import (
	"bytes"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
	"ingot/verify"
)

// BenchmarkLayouts builds the 5-gram Kneser-Ney model of nine tenths of the
// bundled corpus (every tenth sentence held out), in floats and quantized
// to 8 and 4 bits, and measures, for format versions 2 and 3: bytes per
// n-gram of the whole file; per-word scoring of the held-out text with
// Model.Next against one dependent random access over a buffer of the
// file's size (a pointer chase), in the same rounds; open time of a tiny
// and of this model; and full verification against one lookup per n-gram.
// Run it once: go test ./format -run '^$' -bench Layouts -benchtime 1x.
func BenchmarkLayouts(b *testing.B) {
	all, err := corpus.SOTU()
	if err != nil {
		b.Fatal(err)
	}
	train, held := corpus.Split(all, 0)
	c, err := counts.NewCounter(5)
	if err != nil {
		b.Fatal(err)
	}
	for _, s := range train {
		c.AddSentence(strings.Fields(s))
	}
	tb, _, err := estimate.Estimate(c.Counts(1), estimate.Options{Method: estimate.KneserNey, Order: 5})
	if err != nil {
		b.Fatal(err)
	}
	models := map[string]*tables.Tables{"float": tb}
	for _, bits := range []int{8, 4} {
		q, _, err := quantize.Model(tb, quantize.Options{Bits: bits, Trainer: quantize.LeastSquares})
		if err != nil {
			b.Fatal(err)
		}
		models[map[int]string{8: "8-bit", 4: "4-bit"}[bits]] = q
	}
	ngrams := 0
	for k := 1; k <= tb.Order(); k++ {
		ngrams += tb.Len(k)
	}
	dir := b.TempDir()
	files := map[string]string{}
	for _, name := range []string{"float", "8-bit", "4-bit"} {
		for _, v := range []int{2, 3} {
			data, err := format.MarshalVersion(models[name], v)
			if err != nil {
				b.Fatal(err)
			}
			path := filepath.Join(dir, name+map[int]string{2: ".v2", 3: ".v3"}[v])
			if err := os.WriteFile(path, data, 0o644); err != nil {
				b.Fatal(err)
			}
			files[name+map[int]string{2: ".v2", 3: ".v3"}[v]] = path
			b.ReportMetric(float64(len(data))/float64(ngrams), name+"-v"+string(rune('0'+v))+"-bytes/ngram")
		}
	}
	b.ReportMetric(float64(ngrams), "ngrams")

	m3, err := format.Open(files["8-bit.v3"])
	if err != nil {
		b.Fatal(err)
	}
	defer m3.Close()
	m2, err := format.Open(files["8-bit.v2"])
	if err != nil {
		b.Fatal(err)
	}
	defer m2.Close()
	var ids []uint32
	for _, s := range held {
		for _, w := range strings.Fields(s) {
			id, ok := m3.ID(w)
			if !ok {
				id = m3.UnknownID()
			}
			ids = append(ids, id)
		}
		ids = append(ids, m3.EndID())
	}
	chase := newChase(int(m3.Size()))
	var t3, t2, tc []float64
	var sum3, sum2 float64
	for range 5 {
		d, s := scoreText(m3, ids)
		t3, sum3 = append(t3, d), s
		d, s = scoreText(m2, ids)
		t2, sum2 = append(t2, d), s
		tc = append(tc, chase.run(len(ids)*4))
	}
	if sum3 != sum2 {
		b.Fatalf("held-out log10 sums differ: version 3 %v, version 2 %v", sum3, sum2)
	}
	b.ReportMetric(float64(len(ids)), "words")
	b.ReportMetric(median(t3), "v3-ns/word")
	b.ReportMetric(median(t2), "v2-ns/word")
	b.ReportMetric(median(tc), "chase-ns")
	b.ReportMetric(median(t3)/median(tc), "v3/chase")
	b.ReportMetric(median(t2)/median(tc), "v2/chase")
	b.ReportMetric(float64(m3.Size())/(1<<20), "v3-MiB")

	// Open time: the golden model and this one.
	tiny := filepath.Join("..", "spec", "golden", "tiny.v3.ingot")
	b.ReportMetric(openTime(b, tiny), "open-tiny-ns")
	b.ReportMetric(openTime(b, files["8-bit.v3"]), "open-large-ns")

	// Verification against one lookup per n-gram.
	grams := make([][]uint32, 0, ngrams)
	t8 := models["8-bit"]
	for k := 1; k <= t8.Order(); k++ {
		for i := 0; i < t8.Len(k); i++ {
			grams = append(grams, t8.Gram(k, i))
		}
	}
	rand.New(rand.NewPCG(1, 2)).Shuffle(len(grams), func(i, j int) { grams[i], grams[j] = grams[j], grams[i] })
	start := time.Now()
	for _, g := range grams {
		if _, ok := m3.Find(g); !ok {
			b.Fatalf("n-gram %v not found", g)
		}
	}
	lookups := time.Since(start)
	data, err := os.ReadFile(files["8-bit.v3"])
	if err != nil {
		b.Fatal(err)
	}
	start = time.Now()
	if err := mustFromBytes(b, data).Verify(); err != nil {
		b.Fatal(err)
	}
	structural := time.Since(start)
	start = time.Now()
	rep, err := verify.Bytes(data, verify.Options{})
	if err != nil || !rep.OK() {
		b.Fatalf("ingot verify: %v %v", err, rep.Failed())
	}
	full := time.Since(start)
	b.ReportMetric(lookups.Seconds(), "lookups-s")
	b.ReportMetric(structural.Seconds(), "model-verify-s")
	b.ReportMetric(full.Seconds(), "ingot-verify-s")
	b.ReportMetric(structural.Seconds()/lookups.Seconds(), "model-verify/lookups")
	b.ReportMetric(full.Seconds()/lookups.Seconds(), "ingot-verify/lookups")
	_ = bytes.Equal
}

func mustFromBytes(b *testing.B, data []byte) *format.Model {
	m, err := format.FromBytes(data)
	if err != nil {
		b.Fatal(err)
	}
	return m
}

// scoreText scores ids word by word and returns ns per word and the sum.
func scoreText(m *format.Model, ids []uint32) (float64, float64) {
	s := m.StartState()
	sum := 0.0
	start := time.Now()
	for _, w := range ids {
		sum += m.Next(&s, w)
		if w == m.EndID() {
			s = m.StartState()
		}
	}
	return float64(time.Since(start).Nanoseconds()) / float64(len(ids)), sum
}

// pointerChase is a random cyclic permutation over a buffer: each step
// loads the next index from the slot the last one named, so every load
// waits for the one before.
type pointerChase struct{ next []uint32 }

func newChase(size int) *pointerChase {
	n := max(size/4, 2)
	perm := rand.New(rand.NewPCG(3, 4)).Perm(n)
	next := make([]uint32, n)
	for i := range perm {
		next[perm[i]] = uint32(perm[(i+1)%n])
	}
	return &pointerChase{next}
}

var chaseSink uint32

// run follows steps links and returns ns per step.
func (c *pointerChase) run(steps int) float64 {
	p := uint32(0)
	start := time.Now()
	for range steps {
		p = c.next[p]
	}
	chaseSink += p
	return float64(time.Since(start).Nanoseconds()) / float64(steps)
}

func openTime(b *testing.B, path string) float64 {
	var ts []float64
	for range 200 {
		start := time.Now()
		m, err := format.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		ts = append(ts, float64(time.Since(start).Nanoseconds()))
		m.Close()
	}
	return median(ts)
}

func median(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[len(s)/2]
}
