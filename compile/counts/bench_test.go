package counts

import (
	"bytes"
	"context"
	"io"
	"syscall"
	"testing"
	"time"
)

// cpuTime returns the CPU time this process has used (user + system): on
// a shared, loaded machine it measures the work done, where wall time
// measures the neighbours too.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// benchCount counts generated text at order 5 and reports tokens per
// CPU-second (the per-core throughput) and per wall-second.
func benchCount(b *testing.B, count func(data []byte)) {
	data := generated(b, 20000, 20000, 1)
	tokens := float64(len(bytes.Fields(data)))
	b.SetBytes(int64(len(data)))
	cpu := cpuTime()
	for b.Loop() {
		count(data)
	}
	used := (cpuTime() - cpu).Seconds()
	b.ReportMetric(tokens*float64(b.N)/used, "tokens/cpu-s")
	b.ReportMetric(tokens*float64(b.N)/b.Elapsed().Seconds(), "tokens/s")
}

// BenchmarkCount is Count with one worker; BenchmarkCountAllCores with
// GOMAXPROCS workers; BenchmarkCounter the in-memory Counter (the counting
// of earlier versions), measured side by side.
func BenchmarkCount(b *testing.B) {
	benchCount(b, func(data []byte) {
		if _, err := Count(context.Background(), Options{Order: 5, Workers: 1}, []Input{{"gen", bytes.NewReader(data)}}, io.Discard); err != nil {
			b.Fatal(err)
		}
	})
}

func BenchmarkCountAllCores(b *testing.B) {
	benchCount(b, func(data []byte) {
		if _, err := Count(context.Background(), Options{Order: 5}, []Input{{"gen", bytes.NewReader(data)}}, io.Discard); err != nil {
			b.Fatal(err)
		}
	})
}

func BenchmarkCounter(b *testing.B) {
	benchCount(b, func(data []byte) {
		c, _ := NewCounter(5)
		if err := c.AddText("gen", bytes.NewReader(data)); err != nil {
			b.Fatal(err)
		}
		if err := c.Counts(1).WriteBinary(io.Discard); err != nil {
			b.Fatal(err)
		}
	})
}
