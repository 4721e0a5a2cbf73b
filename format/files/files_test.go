//go:build unix

package files

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

func write(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestOpenRegularAndCaps(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	for path, kind := range map[string]string{fifo: "a named pipe", dir: "a directory", "/dev/zero": "a device"} {
		_, _, err := OpenRegular(path) // a FIFO without a writer would block a plain open
		if !errors.Is(err, ErrNotRegular) || !strings.Contains(err.Error(), "is "+kind) {
			t.Errorf("%s: %v", path, err)
		}
		if _, err := ReadCapped(path, 10); !errors.Is(err, ErrNotRegular) {
			t.Errorf("ReadCapped(%s): %v", path, err)
		}
	}
	small := write(t, dir, "small", "0123456789")
	if b, err := ReadCapped(small, 10); err != nil || string(b) != "0123456789" {
		t.Errorf("at the cap: %q, %v", b, err)
	}
	if _, err := ReadCapped(small, 9); err == nil || !strings.Contains(err.Error(), "at most 9 are read") {
		t.Errorf("over the cap: %v", err)
	}
	if b, err := ReadRegular(small); err != nil || len(b) != 10 {
		t.Errorf("ReadRegular: %q, %v", b, err)
	}
}

func TestCheckOutput(t *testing.T) {
	dir := t.TempDir()
	in := write(t, dir, "in.txt", "x\n")
	hard := filepath.Join(dir, "hard.txt")
	soft := filepath.Join(dir, "soft.txt")
	os.Link(in, hard)
	os.Symlink(in, soft)
	for out, want := range map[string]string{
		in:                                 "is also an input",
		hard:                               "is the same file as the input",
		soft:                               "is the same file as the input",
		filepath.Join(dir, "no", "out"):    "no such file or directory",
		dir:                                "is a directory, not a file that can be replaced",
		filepath.Join(in, "out"):           "is a regular file, not a directory",
		filepath.Join(dir, "new.txt"):      "",
		filepath.Join(dir, ".", "new.txt"): "",
	} {
		err := CheckOutput(out, "-", filepath.Join(dir, "absent"), in)
		if want == "" && err != nil || want != "" && (err == nil || !strings.Contains(err.Error(), want)) {
			t.Errorf("%s: %v, want %q", out, err, want)
		}
	}
	if os.Geteuid() != 0 { // root writes anywhere
		ro := filepath.Join(dir, "ro")
		os.Mkdir(ro, 0o500)
		if err := CheckOutput(filepath.Join(ro, "out"), in); err == nil || !strings.Contains(err.Error(), "cannot create files in") {
			t.Errorf("read-only directory: %v", err)
		}
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if strings.Contains(e.Name(), ".check-") {
			t.Errorf("left %s behind", e.Name())
		}
	}
}

func TestFirstRepeat(t *testing.T) {
	dir := t.TempDir()
	a := write(t, dir, "a", "1")
	b := write(t, dir, "b", "2")
	link := filepath.Join(dir, "l")
	os.Symlink(b, link)
	if i, j, ok := FirstRepeat([]string{a, "-", b, "-", filepath.Join(dir, "absent"), link}); !ok || i != 2 || j != 5 {
		t.Errorf("got %d, %d, %v; want 2, 5, true", i, j, ok)
	}
	if _, _, ok := FirstRepeat([]string{a, b, "-", "-"}); ok {
		t.Error("distinct files reported as a repeat")
	}
}

func TestCreateTempKeepModeAndPublish(t *testing.T) {
	dir := t.TempDir()
	old := syscall.Umask(0o027)
	defer syscall.Umask(old)
	f, err := CreateTemp(dir, ".x-", 0o666)
	if err != nil {
		t.Fatal(err)
	}
	f.Close()
	if st, _ := os.Stat(f.Name()); st.Mode().Perm() != 0o640 {
		t.Errorf("new file under umask 027: %o, want 640", st.Mode().Perm())
	}
	target := write(t, dir, "target", "old")
	os.Chmod(target, 0o600)
	if err := KeepMode(f.Name(), target); err != nil {
		t.Fatal(err)
	}
	if st, _ := os.Stat(f.Name()); st.Mode().Perm() != 0o600 {
		t.Errorf("KeepMode: %o, want 600", st.Mode().Perm())
	}
	if err := PublishExclusive(f.Name(), target); !errors.Is(err, fs.ErrExist) {
		t.Errorf("publishing over an existing file: %v", err)
	}
	fresh := filepath.Join(dir, "fresh")
	if err := PublishExclusive(f.Name(), fresh); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(f.Name()); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("temporary name still there: %v", err)
	}
}
