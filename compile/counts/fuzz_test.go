package counts

import (
	"bytes"
	"context"
	"strings"
	"testing"
	"unicode/utf8"
)

// FuzzLoad reads arbitrary bytes as a count file (text or binary): it never panics, and
// whatever it accepts round-trips (written back and read again, the same
// counts).
func FuzzLoad(f *testing.F) {
	f.Add([]byte("2\ta\n2\t</s>\n2\t<s> a\n2\ta </s>\n"), 2)
	f.Add([]byte("1\ta b\n"), 2)
	f.Add([]byte("3\tthe beacon\r\n3\tthe\n3\tbeacon\n3\t<s> the\n3\tbeacon </s>\n3\t</s>\n"), 3)
	f.Add([]byte("18446744073709551615\tx\n1\tx\n"), 1)
	f.Add([]byte("1\t\xff\n"), 1)
	var bin bytes.Buffer
	c, _ := NewCounter(2)
	c.AddText("t", bytes.NewReader([]byte("turn the beacon on\nthe beacon\n")))
	c.Counts(1).WriteBinary(&bin)
	f.Add(bin.Bytes(), 2)
	f.Fuzz(func(t *testing.T, data []byte, order int) {
		if order < 1 || order > 4 {
			order = 1 + (order&3+4)%4
		}
		c, err := Load(order, []Source{{Name: "f", R: bytes.NewReader(data)}})
		if err != nil {
			if !strings.HasPrefix(err.Error(), "f") && !strings.HasPrefix(err.Error(), "no n-grams") && !strings.HasPrefix(err.Error(), "no unigram") && !strings.HasPrefix(err.Error(), "counts hold") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		var out bytes.Buffer
		if _, err := c.WriteTo(&out); err != nil {
			t.Fatal(err)
		}
		again, err := Load(order, []Source{{Name: "g", R: bytes.NewReader(out.Bytes())}})
		if err != nil {
			t.Fatalf("written counts do not load: %v\n%s", err, out.Bytes())
		}
		var out2 bytes.Buffer
		again.WriteTo(&out2)
		if !bytes.Equal(out.Bytes(), out2.Bytes()) {
			t.Fatalf("round trip differs:\n%s\n---\n%s", out.Bytes(), out2.Bytes())
		}
	})
}

// FuzzCountText counts arbitrary bytes as training text: it never panics,
// rejects invalid UTF-8 and markers with file and line, and every token it
// counts is valid UTF-8 without white space. Count (its own tokeniser, its
// own tables; with a table small enough to spill) writes the same bytes as
// the Counter (strings.Fields, Go maps), or fails with the same error.
func FuzzCountText(f *testing.F) {
	f.Add([]byte("turn the beacon on\n\nmark waypoint\n"))
	f.Add([]byte("a <s> b\n"))
	f.Add([]byte("caf\xc3\xa9 \xe2\x80\x83 na\xc3\xafve\r\n"))
	f.Add([]byte("\xff\n"))
	f.Add([]byte("a\u00a0b\u0085c\u3000d\u2028e\u200bf\u180eg\vh\fi <unk>\n"))
	f.Add([]byte("ok\nbad\rline\r\n"))
	f.Add([]byte("\ufeffa b\nc\ufeff\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		c, _ := NewCounter(3)
		err := c.AddText("t", bytes.NewReader(data))
		var fast bytes.Buffer
		_, ferr := Count(context.Background(), Options{Order: 3, Workers: 1, Memory: 1 << 10, TempDir: t.TempDir()},
			[]Input{{"t", bytes.NewReader(data)}}, &fast)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "t:") {
				t.Fatalf("error does not name file and line: %v", err)
			}
			if ferr == nil || ferr.Error() != err.Error() {
				t.Fatalf("Count: %v, Counter: %v", ferr, err)
			}
			return
		}
		if ferr != nil {
			t.Fatalf("Count failed where the Counter did not: %v", ferr)
		}
		var slow bytes.Buffer
		if c.Counts(1).WriteBinary(&slow); fast.Len() > 0 && !bytes.Equal(fast.Bytes(), slow.Bytes()) {
			t.Fatalf("Count and the Counter differ on %q", data)
		}
		res := c.Counts(1)
		for _, w := range res.Vocab {
			if !utf8.ValidString(w) || strings.IndexFunc(w, isSpace) >= 0 || w == "" {
				t.Fatalf("bad token %q", w)
			}
		}
	})
}

func isSpace(r rune) bool { return strings.TrimSpace(string(r)) == "" }
