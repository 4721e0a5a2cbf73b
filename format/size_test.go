package format_test

import (
	"fmt"
	"io"
	"testing"

	"ingot/compile/budget"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

// FileSize is the length of what Write writes, over models of every shape:
// random tables of orders 1 to 6 (suffixes stored or not), models of the
// four methods estimated from the bundled corpus, quantized at several
// widths, and pruned (which leaves suffixes unstored).
func TestFileSizeIsTheWrittenSize(t *testing.T) {
	var models []*tables.Tables
	for seed := range uint64(40) {
		order := 1 + int(seed%6)
		ngrams := make([]int, order-1)
		for k := range ngrams {
			ngrams[k] = int(seed*37%500) + 5*k
		}
		models = append(models, fixture.RandomTables(seed, 3+int(seed*13%300), ngrams))
	}
	train := fixture.Train(t, 500)
	for _, m := range estimate.Methods {
		for order := 1; order <= 4; order++ {
			tb, _, err := estimate.Estimate(fixture.Counts(t, order, train), estimate.Options{Method: m, Order: order, Discount: 0.5, KatzThreshold: estimate.DefaultKatzThreshold})
			if err != nil {
				t.Fatal(err)
			}
			models = append(models, tb)
			if order < 2 {
				continue
			}
			keep := prune.Keep(tb, prune.EntropyScores(tb), 1e-6)
			models = append(models, prune.Select(tb, keep))
			if order != 3 {
				continue
			}
			for _, opt := range []quantize.Options{{Bits: 2, Trainer: quantize.LeastSquares}, {Bits: 8, BackoffBits: 5, Trainer: quantize.EqualMass}} {
				q, _, err := quantize.Model(tb, opt)
				if err != nil {
					t.Fatal(err)
				}
				models = append(models, q)
			}
		}
	}
	for i, tb := range models {
		b, err := format.Marshal(tb)
		if err != nil {
			t.Fatal(err)
		}
		got, err := format.FileSize(tb, format.Planned{})
		if err != nil || got != int64(len(b)) {
			t.Errorf("model %d (order %d, %s): FileSize %d (%v), written %d bytes", i, tb.Order(), tb.Info.Method, got, err, len(b))
		}
	}
	if _, err := format.FileSize(&tables.Tables{}, format.Planned{}); err == nil {
		t.Error("FileSize of tables Write refuses gave no error")
	}
}

// A plan counts a model as quantization will shape it: budget.PlannedSize
// is the written size of the placeholder tables quantize shapes for
// measuring, without building them.
func TestFileSizePlannedIsThePlaceholderSize(t *testing.T) {
	train := fixture.Train(t, 800)
	for _, order := range []int{2, 3, 5} {
		tb, _, err := estimate.Estimate(fixture.Counts(t, order, train), estimate.Options{Method: estimate.KneserNey, Order: order})
		if err != nil {
			t.Fatal(err)
		}
		for _, opt := range []quantize.Options{{Bits: 4, Trainer: quantize.EqualMass}, {Bits: 8, BackoffBits: 6, Trainer: quantize.LeastSquares}} {
			b, err := format.Marshal(quantize.Placeholder(tb, opt))
			if err != nil {
				t.Fatal(err)
			}
			want := int64(len(b))
			got, err := budget.PlannedSize(tb, opt)
			if err != nil || got != want {
				t.Errorf("order %d, %+v: planned size %d (%v), placeholder written %d", order, opt, got, err, want)
			}
		}
	}
}

func ExampleFileSize() {
	tb := fixture.RandomTables(1, 50, []int{200, 300})
	n, _ := format.FileSize(tb, format.Planned{})
	b, _ := format.Marshal(tb)
	fmt.Println(n == int64(len(b)))
	// Output: true
}

// BenchmarkSize compares computing a model's file size (FileSize) with
// writing it (what Size did before), on random tables of 300,000 n-grams.
func BenchmarkSize(b *testing.B) {
	tb := fixture.RandomTables(3, 20000, []int{100000, 100000, 100000})
	b.Run("FileSize", func(b *testing.B) {
		for range b.N {
			if _, err := format.FileSize(tb, format.Planned{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("Write", func(b *testing.B) {
		for range b.N {
			if err := format.Write(io.Discard, tb); err != nil {
				b.Fatal(err)
			}
		}
	})
}
