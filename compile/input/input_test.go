package input

import (
	"bytes"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
)

func TestOpenDecompressesByExtension(t *testing.T) {
	dir := t.TempDir()
	text := "turn the beacon on\nmark waypoint\n"
	var gz, zs bytes.Buffer
	gw := gzip.NewWriter(&gz)
	gw.Write([]byte(text))
	gw.Close()
	zw, _ := zstd.NewWriter(&zs)
	zw.Write([]byte(text))
	zw.Close()
	for name, data := range map[string][]byte{"a.txt": []byte(text), "a.txt.gz": gz.Bytes(), "a.txt.zst": zs.Bytes()} {
		p := filepath.Join(dir, name)
		os.WriteFile(p, data, 0o644)
		r, err := Open(p)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		got, err := io.ReadAll(r)
		r.Close()
		if err != nil || string(got) != text {
			t.Errorf("%s: read %q, %v", name, got, err)
		}
	}
	bad := filepath.Join(dir, "b.gz")
	os.WriteFile(bad, []byte("not gzip"), 0o644)
	if _, err := Open(bad); err == nil || !strings.Contains(err.Error(), "b.gz: not a gzip stream") {
		t.Errorf("bad gzip: %v", err)
	}
}

func TestLinesHandlesEndingsAndLongLines(t *testing.T) {
	long := strings.Repeat("x", 200000)
	in := "a\r\nb\n\n" + long + "\nlast"
	var got []string
	var nums []int
	err := Lines(strings.NewReader(in), func(line []byte, n int) error {
		got = append(got, string(line))
		nums = append(nums, n)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"a", "b", "", long, "last"}
	if len(got) != len(want) {
		t.Fatalf("%d lines, want %d", len(got), len(want))
	}
	for i := range want {
		if got[i] != want[i] || nums[i] != i+1 {
			t.Errorf("line %d: %q (number %d)", i+1, got[i][:min(len(got[i]), 10)], nums[i])
		}
	}
}

// A Hashed input read as stored reads at an offset without moving its
// stream or its digest; a compressed one refuses (its stored bytes are not
// what it reads).
func TestHashedReadAt(t *testing.T) {
	dir := t.TempDir()
	plain := filepath.Join(dir, "c.txt")
	os.WriteFile(plain, []byte("0123456789"), 0o644)
	h, err := OpenRegularHashed(plain)
	if err != nil {
		t.Fatal(err)
	}
	defer h.Close()
	var b [3]byte
	if n, err := h.ReadAt(b[:], 7); n != 3 || err != nil || string(b[:]) != "789" {
		t.Fatalf("ReadAt: %q %d %v", b, n, err)
	}
	if fi, err := h.Stat(); err != nil || fi.Size() != 10 {
		t.Fatalf("Stat: %v %v", fi, err)
	}
	all, _ := io.ReadAll(h)
	n, _, err := h.Digest()
	if string(all) != "0123456789" || n != 10 || err != nil {
		t.Fatalf("stream %q, digest of %d bytes, %v", all, n, err)
	}
	var gz bytes.Buffer
	w := gzip.NewWriter(&gz)
	w.Write([]byte("0123456789"))
	w.Close()
	packed := filepath.Join(dir, "c.txt.gz")
	os.WriteFile(packed, gz.Bytes(), 0o644)
	g, err := OpenRegularHashed(packed)
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	if _, err := g.ReadAt(b[:], 0); err == nil {
		t.Error("a compressed input read at an offset")
	}
	if _, err := g.Stat(); err == nil {
		t.Error("a compressed input gave its stored size")
	}
}
