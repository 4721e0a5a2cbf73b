package pipeline

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
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
	c := fixture.Counts(t, 4, fixture.Train(t, 1200))
	path := filepath.Join(dir, "c.bin")
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(path, bin.Bytes(), 0o644)
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
		tmp := t.TempDir()
		m, err := o.RunBounded(context.Background(), []string{path}, bounded.Options{Memory: 1 << 20, TempDir: tmp})
		if err != nil {
			t.Fatal(err)
		}
		var got bytes.Buffer
		if err := m.Write(&got, m.Info); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), wantBytes) {
			t.Errorf("%s order %d: the model estimated on disk (%d bytes) differs from the one in memory (%d bytes)", opt.Method, opt.Order, got.Len(), len(wantBytes))
		}
		if m.Result.Runs < 2 {
			t.Errorf("%s: %d runs; a 1 MiB budget is meant to spill", opt.Method, m.Result.Runs)
		}
		m.Close()
		if left, _ := os.ReadDir(tmp); len(left) > 0 {
			t.Errorf("%d files left in the temporary directory", len(left))
		}
	}
	o := Compile{Estimate: estimate.Options{Method: estimate.Katz, Order: 2}, MinCount: "2=2"}
	if _, err := o.RunBounded(context.Background(), []string{path}, bounded.Options{Memory: 1 << 20, TempDir: t.TempDir()}); err == nil {
		t.Error("count cutoffs accepted on disk")
	}
}
