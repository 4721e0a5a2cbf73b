package input

import (
	"bytes"
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
)

func gzipped(t *testing.T, b []byte) []byte {
	var buf bytes.Buffer
	w := gzip.NewWriter(&buf)
	w.Write(b)
	w.Close()
	return buf.Bytes()
}

func zstded(t *testing.T, b []byte) []byte {
	var buf bytes.Buffer
	w, _ := zstd.NewWriter(&buf)
	w.Write(b)
	w.Close()
	return buf.Bytes()
}

// Compression is recognised by the magic bytes (gzip: RFC 1952 §2.3.1,
// 1f 8b; zstd: RFC 8878 §3.1.1, 28 b5 2f fd), whatever the name, and on
// standard input; a .gz or .zst name without the magic is an error.
func TestDecompressByMagicBytes(t *testing.T) {
	text := []byte("turn the beacon on\n")
	for name, data := range map[string][]byte{
		"plain":          text,
		"gzip, no .gz":   gzipped(t, text),
		"zstd, no .zst":  zstded(t, text),
		"gzip, .gz name": gzipped(t, text),
		"stdin":          zstded(t, text),
	} {
		r, err := Decompress(name, bytes.NewReader(data))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		got, err := io.ReadAll(r)
		if err != nil || !bytes.Equal(got, text) {
			t.Errorf("%s: read %q, %v", name, got, err)
		}
	}
	for name, want := range map[string]string{"x.gz": "x.gz: not a gzip stream", "x.zst": "x.zst: not a zstd stream"} {
		if _, err := Decompress(name, strings.NewReader("plain text\n")); err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%s: %v, want %q", name, err, want)
		}
	}
	// A gzip file named .txt, opened as a file.
	p := filepath.Join(t.TempDir(), "corpus.txt")
	os.WriteFile(p, gzipped(t, text), 0o644)
	r, err := Open(p)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if got, _ := io.ReadAll(r); !bytes.Equal(got, text) {
		t.Errorf("gzip named .txt: read %q", got)
	}
}

func lines(t *testing.T, in string) ([]string, error) {
	t.Helper()
	var got []string
	err := Lines(strings.NewReader(in), func(b []byte, n int) error {
		got = append(got, string(b))
		return nil
	})
	return got, Named("f.txt", err)
}

// A byte-order mark (U+FEFF in UTF-8, EF BB BF: Unicode §23.8) at the start
// is skipped; anywhere else it is an error naming the line. CR-only line
// endings are refused with a message that says so, not read as one line.
func TestLinesByteOrderMarkAndCarriageReturns(t *testing.T) {
	got, err := lines(t, "\ufeffturn on\nturn off\r\n")
	if err != nil || len(got) != 2 || got[0] != "turn on" || got[1] != "turn off" {
		t.Errorf("leading BOM: %q, %v", got, err)
	}
	for in, want := range map[string]string{
		"a\n\ufeffb\n":                        "f.txt:2: byte-order mark",
		"a\nb c\ufeff\n":                      "f.txt:2: byte-order mark",
		"\ufeff\ufeffa\n":                     "f.txt:1: byte-order mark",
		"one\rtwo\rthree\r":                   "f.txt:1: carriage return inside a line: lines must end with LF or CR LF; CR-only line endings",
		"ok\r\nbad\rline\r\n":                 "f.txt:2: carriage return",
		"ok\n" + strings.Repeat("x\r", 70000): "f.txt:2: carriage return",
	} {
		if _, err := lines(t, in); err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%.20q: %v, want %q", in, err, want)
		}
	}
}

// No line may exceed the cap: the error names the line, and a reader holds
// no more than the cap for it, whatever the input (here an endless stream
// of NUL bytes, as a decompression bomb gives, under a cap of 1 MiB).
func TestLinesCap(t *testing.T) {
	old := SetMaxLine(1 << 20)
	defer SetMaxLine(old)
	if MaxLine() != 1<<20 {
		t.Fatalf("cap %d", MaxLine())
	}
	ok := strings.Repeat("w ", 1<<19) + "\n" // 1 MiB exactly, then the line feed
	if _, err := lines(t, "a\n"+ok); err != nil {
		t.Errorf("a line under the cap: %v", err)
	}
	_, err := lines(t, "a\n"+ok[:len(ok)-1]+"x\n")
	var e *Error
	if !errors.As(err, &e) || e.Line != 2 || !strings.Contains(err.Error(), "f.txt:2: line longer than 1048576 bytes") {
		t.Errorf("a line over the cap: %v", err)
	}
	endless := io.LimitReader(zeros{}, 1<<40)
	err = Named("bomb", Lines(endless, func([]byte, int) error { return nil }))
	if err == nil || !strings.Contains(err.Error(), "bomb:1: line longer than") {
		t.Errorf("endless line: %v", err)
	}
	SetMaxLine(0)
	if MaxLine() != DefaultMaxLine {
		t.Errorf("SetMaxLine(0) left %d, want the default", MaxLine())
	}
}

type zeros struct{}

func (zeros) Read(p []byte) (int, error) {
	clear(p)
	return len(p), nil
}

// Count files must be regular files; a directory is refused by every opener.
func TestOpenRefusesDirectories(t *testing.T) {
	dir := t.TempDir()
	for name, open := range map[string]func(string) (io.ReadCloser, error){"Open": Open, "OpenRegular": OpenRegular} {
		if _, err := open(dir); err == nil || !strings.Contains(err.Error(), "is a directory") {
			t.Errorf("%s(dir): %v", name, err)
		}
	}
	if _, err := OpenRegular("/dev/zero"); err == nil || !strings.Contains(err.Error(), "is a device") {
		t.Errorf("OpenRegular(/dev/zero): %v", err)
	}
}
