package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// Reproducible builds: the same inputs and options give byte-identical
// count files and models whatever GOMAXPROCS is, and a model records a time
// only when SOURCE_DATE_EPOCH fixes it (the reproducible-builds convention).
func TestBuildsAreReproducible(t *testing.T) {
	bin := buildIngot(t)
	dir := t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	build := func(env ...string) ([]byte, []byte) {
		t.Helper()
		c := filepath.Join(dir, "c.tsv")
		m := filepath.Join(dir, "m.ingot")
		for _, args := range [][]string{
			{"count", "--order", "3", "-o", c, text},
			{"compile", "--method", "kneser-ney", "--order", "3", "--min-count", "3=2", "-o", m, c},
		} {
			cmd := exec.Command(bin, args...)
			for _, kv := range os.Environ() {
				if !strings.HasPrefix(kv, "SOURCE_DATE_EPOCH=") {
					cmd.Env = append(cmd.Env, kv)
				}
			}
			cmd.Env = append(cmd.Env, env...)
			if out, err := cmd.CombinedOutput(); err != nil {
				t.Fatalf("%v: %v\n%s", args, err, out)
			}
		}
		counts, _ := os.ReadFile(c)
		model, _ := os.ReadFile(m)
		return counts, model
	}
	c1, m1 := build("GOMAXPROCS=1")
	c2, m2 := build("GOMAXPROCS=2")
	if !bytes.Equal(c1, c2) || !bytes.Equal(m1, m2) {
		t.Error("GOMAXPROCS=1 and 2 give different files")
	}
	if bytes.Contains(m1, []byte("build_time")) {
		t.Error("a model built without SOURCE_DATE_EPOCH records a time")
	}
	_, e1 := build("SOURCE_DATE_EPOCH=1700000000")
	_, e2 := build("SOURCE_DATE_EPOCH=1700000000", "GOMAXPROCS=1")
	if !bytes.Equal(e1, e2) {
		t.Error("two builds with the same SOURCE_DATE_EPOCH differ")
	}
	if !bytes.Contains(e1, []byte(`"build_time":"2023-11-14T22:13:20Z"`)) {
		t.Error("SOURCE_DATE_EPOCH=1700000000 not recorded as 2023-11-14T22:13:20Z")
	}
}
