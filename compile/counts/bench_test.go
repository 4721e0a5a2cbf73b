package counts

import (
	"bytes"
	"context"
	"io"
	"testing"
)

// BenchmarkCount counts generated text at order 5 with one worker and
// reports tokens per second; BenchmarkCounter does the same with the plain
// in-memory Counter, side by side.
func BenchmarkCount(b *testing.B) {
	data := generated(b, 20000, 20000, 1)
	tokens := float64(len(bytes.Fields(data)))
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		if _, err := Count(context.Background(), Options{Order: 5, Workers: 1}, []Input{{"gen", bytes.NewReader(data)}}, io.Discard); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(tokens*float64(b.N)/b.Elapsed().Seconds(), "tokens/s")
}

func BenchmarkCounter(b *testing.B) {
	data := generated(b, 20000, 20000, 1)
	tokens := float64(len(bytes.Fields(data)))
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		c, _ := NewCounter(5)
		if err := c.AddText("gen", bytes.NewReader(data)); err != nil {
			b.Fatal(err)
		}
		if err := c.Counts(1).WriteBinary(io.Discard); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(tokens*float64(b.N)/b.Elapsed().Seconds(), "tokens/s")
}
