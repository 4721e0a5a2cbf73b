package pipeline

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"runtime"
	"testing"

	"ingot/compile/bounded"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/format"
)

// RunBounded writes the model Run writes, byte for byte (provenance and
// report included), with a budget that sorts on disk; its files are gone
// after Close.
func TestRunBoundedSameModel(t *testing.T) {
	dir := t.TempDir()
	path := bundledCountsFile(t, dir)
	for _, opt := range []estimate.Options{{Method: estimate.KneserNey, Order: 4}, {Method: estimate.Absolute, AutoDiscount: true, Order: 3}} {
		o := Compile{Estimate: opt, Discount: "auto", ToolVersion: "test", Command: Record([]string{"ingot", "compile"}, "")}
		cc, ins, err := LoadCounts(opt.Order, []string{path})
		if err != nil {
			t.Fatal(err)
		}
		mem := o
		mem.Command = Record([]string{"ingot", "compile"}, "", ins...)
		want, err := mem.Run(cc)
		if err != nil {
			t.Fatal(err)
		}
		wantBytes, err := format.Marshal(want.Model)
		if err != nil {
			t.Fatal(err)
		}
		// 64 KiB: suffixes found by sorts that spill runs to disk; 4
		// MiB: by links in memory.
		for _, memory := range []int64{64 << 10, 4 << 20} {
			tmp := t.TempDir()
			m, err := o.RunBounded(context.Background(), []string{path}, bounded.Options{Memory: memory, TempDir: tmp})
			if err != nil {
				t.Fatal(err)
			}
			var got bytes.Buffer
			if err := m.Write(&got, m.Info); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got.Bytes(), wantBytes) {
				t.Errorf("%s order %d, budget %d: the model estimated on disk (%d bytes) differs from the one in memory (%d bytes)", opt.Method, opt.Order, memory, got.Len(), len(wantBytes))
			}
			if small := memory == 64<<10; m.Result.Linked == small || small && m.Result.Runs < 2 {
				t.Errorf("%s, budget %d: linked in memory %v, %d runs", opt.Method, memory, m.Result.Linked, m.Result.Runs)
			}
			m.Close()
			if left, _ := os.ReadDir(tmp); len(left) > 0 {
				t.Errorf("%d files left in the temporary directory", len(left))
			}
		}
	}
	o := Compile{Estimate: estimate.Options{Method: estimate.Katz, Order: 2}, MinCount: "2=2"}
	if _, err := o.RunBounded(context.Background(), []string{path}, bounded.Options{Memory: 1 << 20, TempDir: t.TempDir()}); err == nil {
		t.Error("count cutoffs accepted on disk")
	}
}

// RunBounded reads shards of both forms and lowers the order as Run does:
// a text shard and a binary one summed, and counts of two-word sentences
// asked for order 5 (no n-gram above order 4 exists) give Run's model.
func TestRunBoundedShardsAndLowOrder(t *testing.T) {
	dir := t.TempDir()
	c := fixture.Counts(t, 3, fixture.Train(t, 300))
	var bin, txt bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	if _, err := c.WriteTo(&txt); err != nil {
		t.Fatal(err)
	}
	short := fixture.Counts(t, 5, []string{"a b", "b c", "c a", "a b"})
	var shortBin bytes.Buffer
	if err := short.WriteBinary(&shortBin); err != nil {
		t.Fatal(err)
	}
	files := map[string][]byte{"c.bin": bin.Bytes(), "c.txt": txt.Bytes(), "short.bin": shortBin.Bytes()}
	for name, b := range files {
		os.WriteFile(filepath.Join(dir, name), b, 0o644)
	}
	for _, tc := range []struct {
		names []string
		order int
	}{{[]string{"c.txt", "c.bin"}, 3}, {[]string{"short.bin"}, 5}} {
		var paths []string
		for _, n := range tc.names {
			paths = append(paths, filepath.Join(dir, n))
		}
		opt := estimate.Options{Method: estimate.WittenBell, Order: tc.order}
		var warned []string
		o := Compile{Estimate: opt, ToolVersion: "test", Command: Record([]string{"ingot", "compile"}, ""),
			Warn: func(s string) { warned = append(warned, s) }}
		cc, ins, err := LoadCounts(tc.order, paths)
		if err != nil {
			t.Fatal(err)
		}
		mem := o
		mem.Command = Record([]string{"ingot", "compile"}, "", ins...)
		want, err := mem.Run(cc)
		if err != nil {
			t.Fatal(err)
		}
		wantBytes, err := format.Marshal(want.Model)
		if err != nil {
			t.Fatal(err)
		}
		m, err := o.RunBounded(context.Background(), paths, bounded.Options{Memory: 1 << 20, TempDir: t.TempDir()})
		if err != nil {
			t.Fatal(err)
		}
		var got bytes.Buffer
		if err := m.Write(&got, m.Info); err != nil {
			t.Fatal(err)
		}
		m.Close()
		if !bytes.Equal(got.Bytes(), wantBytes) {
			t.Errorf("%v: the model estimated on disk (%d bytes) differs from the one in memory (%d bytes)", tc.names, got.Len(), len(wantBytes))
		}
		if m.Estimate.Order != want.Estimate.Order || len(warned) != 2*boolInt(want.Estimate.Order < tc.order) {
			t.Errorf("%v: order %d on disk, %d in memory; warnings %q", tc.names, m.Estimate.Order, want.Estimate.Order, warned)
		}
	}
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// The model is the same bytes on one core as on every core, in memory and
// on disk (sorting, linking and writing share work among GOMAXPROCS
// workers).
func TestSameModelOnOneCore(t *testing.T) {
	dir := t.TempDir()
	path := bundledCountsFile(t, dir)
	o := Compile{Estimate: estimate.Options{Method: estimate.KneserNey, Order: 4}, ToolVersion: "test", Command: Record([]string{"ingot", "compile"}, "")}
	build := func(procs int) (mem, disk []byte) {
		defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(procs))
		cc, _, err := LoadCounts(4, []string{path})
		if err != nil {
			t.Fatal(err)
		}
		r, err := o.Run(cc)
		if err != nil {
			t.Fatal(err)
		}
		if mem, err = format.Marshal(r.Model); err != nil {
			t.Fatal(err)
		}
		m, err := o.RunBounded(context.Background(), []string{path}, bounded.Options{Memory: 1 << 20, TempDir: t.TempDir()})
		if err != nil {
			t.Fatal(err)
		}
		defer m.Close()
		var got bytes.Buffer
		if err := m.Write(&got, m.Info); err != nil {
			t.Fatal(err)
		}
		return mem, got.Bytes()
	}
	mem1, disk1 := build(1)
	memN, diskN := build(max(4, runtime.NumCPU()))
	if !bytes.Equal(mem1, memN) {
		t.Error("in memory: one core and every core give different models")
	}
	if !bytes.Equal(disk1, diskN) {
		t.Error("on disk: one core and every core give different models")
	}
	// The command lines differ (provenance), so compare the disk models
	// with each other only; TestRunBoundedSameModel compares the paths.
	if len(mem1) == 0 || len(disk1) == 0 {
		t.Error("empty model")
	}
}

// bundledCountsFile writes the order-4 counts of the first 1,200 sentences'
// training part (fixture.Train) as a binary count file in dir.
func bundledCountsFile(t *testing.T, dir string) string {
	t.Helper()
	var bin bytes.Buffer
	if err := fixture.Counts(t, 4, fixture.Train(t, 1200)).WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "c.bin")
	if err := os.WriteFile(path, bin.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}
