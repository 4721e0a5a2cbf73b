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
