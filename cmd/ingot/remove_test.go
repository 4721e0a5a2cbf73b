package main

import (
	"fmt"
	"os"
	"path/filepath"
	"testing"
)

// An interrupt removes the spill directory while a worker may still be
// starting a run in it: the directory must be gone afterwards even though
// files keep appearing in it until then.
func TestRemoveWhileWrittenOutlastsAWriter(t *testing.T) {
	for round := 0; round < 20; round++ {
		dir := filepath.Join(t.TempDir(), "ingot-spill-x")
		if err := os.Mkdir(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		for i := 0; i < 200; i++ {
			os.WriteFile(filepath.Join(dir, fmt.Sprintf("run-%d", i)), nil, 0o644)
		}
		stop, done := make(chan struct{}), make(chan struct{})
		go func() { // the worker: new runs until the directory is gone
			defer close(done)
			for i := 200; ; i++ {
				select {
				case <-stop:
					return
				default:
				}
				f, err := os.Create(filepath.Join(dir, fmt.Sprintf("run-%d", i)))
				if err != nil {
					return
				}
				f.Close()
			}
		}()
		removeWhileWritten(dir)
		close(stop)
		<-done
		if _, err := os.Stat(dir); !os.IsNotExist(err) {
			t.Fatalf("round %d: %s still there after removeWhileWritten (%v)", round, dir, err)
		}
	}
}
