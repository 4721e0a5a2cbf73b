package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"syscall"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/format"
)

// sameModel checks that two models are the same byte for byte but for the
// command lines their provenance records (and so the build information's
// length, offsets and checksums): every other section identical.
func sameModel(t *testing.T, what, pa, pb string) {
	t.Helper()
	a, err := format.Open(pa)
	if err != nil {
		t.Fatal(err)
	}
	defer a.Close()
	b, err := format.Open(pb)
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	da, _ := os.ReadFile(pa)
	db, _ := os.ReadFile(pb)
	sa, sb := a.Sections(), b.Sections()
	if len(sa) != len(sb) {
		t.Fatalf("%s: %d sections against %d", what, len(sa), len(sb))
	}
	for i := range sa {
		x, y := sa[i], sb[i]
		if x.Kind == format.KindBuildInfo {
			continue
		}
		if x.Kind != y.Kind || x.Order != y.Order || x.Encoding != y.Encoding ||
			!bytes.Equal(da[x.Offset:x.Offset+x.Length], db[y.Offset:y.Offset+y.Length]) {
			t.Errorf("%s: %s differs", what, x.Name())
		}
	}
	ia, ib := a.Info(), b.Info()
	if len(ia.Commands) != 1 || len(ib.Commands) != 1 || !reflect.DeepEqual(ia.Commands[0].Inputs, ib.Commands[0].Inputs) {
		t.Errorf("%s: provenance %+v against %+v", what, ia.Commands, ib.Commands)
	}
	ia.Commands, ib.Commands = nil, nil
	if !reflect.DeepEqual(ia, ib) {
		t.Errorf("%s: build information %+v against %+v", what, ia, ib)
	}
}

// compile with a budget too small for its counts estimates in passes on
// disk, under a private directory in --tmp: the counts are spooled there,
// the model is the one compiled in memory, byte for byte but for the
// command line its provenance records, and the directory is gone after
// success, after a failure found late (counts that are not closed) and
// after SIGINT.
func TestCompileSpillDirectoryIsRemoved(t *testing.T) {
	bin := buildIngot(t)
	dir, tmp := t.TempDir(), t.TempDir()
	text := filepath.Join(dir, "train.txt")
	f, _ := os.Create(text)
	corpus.Generate(f, 5, 12000, 30000)
	f.Close()
	counts := filepath.Join(dir, "c.bin")
	if out, err := exec.Command(bin, "count", "--order", "4", "-o", counts, text).CombinedOutput(); err != nil {
		t.Fatalf("count: %v\n%s", err, out)
	}
	left := func() []string {
		entries, _ := os.ReadDir(tmp)
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		return names
	}
	for _, method := range []string{"kneser-ney", "katz"} {
		small, big := filepath.Join(dir, "small.ingot"), filepath.Join(dir, "big.ingot")
		out, err := exec.Command(bin, "compile", "--method", method, "--order", "4", "--memory", "16MiB", "--tmp", tmp,
			"--log-level", "info", "-o", small, counts).CombinedOutput()
		if err != nil {
			t.Fatalf("compile --memory 16MiB: %v\n%s", err, out)
		}
		// The counts are spooled to disk; two orders' links fit 16 MiB,
		// so the suffixes are found in memory (the sorts on disk that a
		// smaller budget takes are tested in compile/pipeline).
		if !strings.Contains(string(out), "counts spooled") || !strings.Contains(string(out), "linking orders in memory") || !strings.Contains(string(out), "msg=estimated") {
			t.Errorf("%s: the 16 MiB compile did not estimate on disk:\n%s", method, out)
		}
		if out, err := exec.Command(bin, "compile", "--method", method, "--order", "4", "--log-level", "info", "-o", big, counts).CombinedOutput(); err != nil {
			t.Fatalf("compile: %v\n%s", err, out)
		} else if strings.Contains(string(out), "counts spooled") {
			t.Errorf("%s: the default budget estimated on disk: %s", method, out)
		}
		sameModel(t, method, small, big)
		if out, err := exec.Command(bin, "verify", small).CombinedOutput(); err != nil {
			t.Errorf("verify: %v\n%s", err, out)
		}
		if l := left(); len(l) > 0 {
			t.Errorf("after success: %v left in --tmp", l)
		}
	}

	// Failure: a shard with a bigram whose words have no count, found
	// after the counts were spooled to disk.
	shard := filepath.Join(dir, "bad.txt")
	os.WriteFile(shard, []byte("1\tzzzq yyyq\n"), 0o644)
	out, err := exec.Command(bin, "compile", "--method", "kneser-ney", "--order", "4", "--memory", "16MiB", "--tmp", tmp,
		"-o", filepath.Join(dir, "x.ingot"), counts, shard).CombinedOutput()
	if err == nil || !strings.Contains(string(out), "not closed") {
		t.Errorf("counts not closed: %v\n%s", err, out)
	}
	if _, err := os.Stat(filepath.Join(dir, "x.ingot")); err == nil {
		t.Error("a model was written from counts that are not closed")
	}
	if l := left(); len(l) > 0 {
		t.Errorf("after failure: %v left in --tmp", l)
	}

	// SIGINT while files are on disk.
	cmd := exec.Command(bin, "compile", "--method", "kneser-ney", "--order", "4", "--memory", "16MiB", "--tmp", tmp,
		"-o", filepath.Join(dir, "y.ingot"), counts)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(60 * time.Second)
	seen := false
	for time.Now().Before(deadline) && !seen {
		if names := left(); len(names) > 0 {
			files, _ := os.ReadDir(filepath.Join(tmp, names[0]))
			seen = len(files) > 0
		}
		time.Sleep(time.Millisecond)
	}
	if !seen {
		t.Fatal("never saw the compile's files under --tmp")
	}
	cmd.Process.Signal(syscall.SIGINT)
	err = cmd.Wait()
	if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != 130 {
		t.Errorf("compile after SIGINT: %v, want exit 130", err)
	}
	if l := left(); len(l) > 0 {
		t.Errorf("after SIGINT: %v left in --tmp", l)
	}
	assertNothingWritten(t, dir, "y.ingot")
}
