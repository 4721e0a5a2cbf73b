package bounded

import (
	"bytes"
	"context"
	"io"
	"os"
	"path/filepath"
	"sync"
	"syscall"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/format"
)

var (
	benchOnce   sync.Once
	benchCounts []byte
	benchErr    error
)

// benchFile returns a binary count file of order 5 of corpus.Generate(seed
// 1, 20000 sentences, 20000 words): about 1.0 M n-grams (orders 1 to 5).
func benchFile(b *testing.B) string {
	benchOnce.Do(func() {
		var text bytes.Buffer
		if benchErr = corpus.Generate(&text, 1, 20000, 20000); benchErr != nil {
			return
		}
		var out bytes.Buffer
		_, benchErr = counts.Count(context.Background(), counts.Options{Order: 5}, []counts.Input{{Name: "text", R: &text}}, &out)
		benchCounts = out.Bytes()
	})
	if benchErr != nil {
		b.Fatal(benchErr)
	}
	p := filepath.Join(b.TempDir(), "c.bin")
	if err := os.WriteFile(p, benchCounts, 0o644); err != nil {
		b.Fatal(err)
	}
	return p
}

func entries(b *testing.B, path string) float64 {
	n, ok := counts.StatEntries(path)
	if !ok {
		b.Fatal("no end record")
	}
	return float64(n)
}

// cpuTime returns the CPU time this process has used (user + system): on
// a shared, loaded machine it measures the work done, where wall time
// measures the neighbours too.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// overCounts runs run b.N times on the benchmark's count file, opened
// afresh each time, and reports n-grams per second and the CPU seconds
// per run (every core's).
func overCounts(b *testing.B, run func(f *os.File)) {
	path := benchFile(b)
	n := entries(b, path)
	b.ResetTimer()
	cpu := cpuTime()
	for range b.N {
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		run(f)
		f.Close()
	}
	b.ReportMetric(n*float64(b.N)/b.Elapsed().Seconds(), "ngrams/s")
	b.ReportMetric((cpuTime()-cpu).Seconds()/float64(b.N), "cpu-s/op")
}

// BenchmarkDecodeCounts reads and decodes every entry of the count file
// (checksums, zstd, varints) on one goroutine: the floor that compile's
// time is compared with.
func BenchmarkDecodeCounts(b *testing.B) {
	overCounts(b, func(f *os.File) { decodeAll(b, f, false) })
}

// BenchmarkDecodeCountsAhead is BenchmarkDecodeCounts with the blocks read,
// checked and decompressed a few ahead on a second goroutine
// (Reader.ReadAhead), as the in-memory compile reads them: the other
// floor, the faster where the second core is free.
func BenchmarkDecodeCountsAhead(b *testing.B) {
	overCounts(b, func(f *os.File) { decodeAll(b, f, true) })
}

func decodeAll(b *testing.B, f *os.File, ahead bool) {
	r, err := counts.NewReader(f)
	if err != nil {
		b.Fatal(err)
	}
	if ahead {
		r.ReadAhead()
		defer r.StopAhead()
	}
	n := 0
	for {
		if _, _, err := r.Next(); err == io.EOF {
			break
		} else if err != nil {
			b.Fatal(err)
		}
		n++
	}
	if n == 0 {
		b.Fatal("no entry decoded")
	}
}

// BenchmarkCompileOnDisk is compile's bounded path, Kneser-Ney order 5,
// within 48 MiB: spool, estimate in sorted passes, write the model. It
// also reports the wall time per run of writing the model file once
// estimated (finish-ms, StreamWriter.Finish), the serial tail.
func BenchmarkCompileOnDisk(b *testing.B) {
	var finish time.Duration
	defer func() { b.ReportMetric(finish.Seconds()*1e3/float64(b.N), "finish-ms") }()
	overCounts(b, func(f *os.File) {
		m, err := Estimate(context.Background(), []counts.Source{{Name: "c", R: f}},
			estimate.Options{Method: estimate.KneserNey, Order: 5}, Options{Memory: 48 << 20, TempDir: b.TempDir()})
		if err != nil {
			b.Fatal(err)
		}
		t := time.Now()
		if err := m.Write(io.Discard, m.Result.Info); err != nil {
			b.Fatal(err)
		}
		finish += time.Since(t)
		m.Close()
	})
}

// BenchmarkCompileInMemory is the in-memory path on the same counts: load,
// estimate, write. It also reports each phase's wall time per run
// (load-ms, estimate-ms, write-ms).
func BenchmarkCompileInMemory(b *testing.B) {
	var load, est, write time.Duration
	overCounts(b, func(f *os.File) {
		t0 := time.Now()
		c, err := counts.Load(5, []counts.Source{{Name: "c", R: f}})
		if err != nil {
			b.Fatal(err)
		}
		t1 := time.Now()
		t, _, err := estimate.Estimate(c, estimate.Options{Method: estimate.KneserNey, Order: 5})
		if err != nil {
			b.Fatal(err)
		}
		t2 := time.Now()
		if err := format.Write(io.Discard, t); err != nil {
			b.Fatal(err)
		}
		load, est, write = load+t1.Sub(t0), est+t2.Sub(t1), write+time.Since(t2)
	})
	n := float64(b.N)
	b.ReportMetric(load.Seconds()*1e3/n, "load-ms")
	b.ReportMetric(est.Seconds()*1e3/n, "estimate-ms")
	b.ReportMetric(write.Seconds()*1e3/n, "write-ms")
}
