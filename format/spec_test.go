package format_test

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"hash/crc32"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// TestSpecificationAlone reads the golden model the way spec/FORMAT.md tells
// a reader in another language to, using nothing of this package: it checks
// the header, checksums and digest as specified, rebuilds every n-gram from
// the columns, applies the back-off rule literally, and compares with the
// expected answers. It keeps the document and the code in agreement.
func TestSpecificationAlone(t *testing.T) {
	f, err := os.ReadFile(filepath.Join("..", "spec", "golden", "tiny.ingot"))
	if err != nil {
		t.Fatal(err)
	}
	le := binary.LittleEndian
	castagnoli := crc32.MakeTable(crc32.Castagnoli)

	// Header (FORMAT.md, "Header").
	if string(f[:8]) != "\x89INGOT\r\n" || le.Uint32(f[8:]) != 1 {
		t.Fatalf("magic or version wrong: % x", f[:12])
	}
	count := int(le.Uint32(f[12:]))
	if le.Uint64(f[16:]) != uint64(len(f)) {
		t.Fatalf("file length field %d, file %d", le.Uint64(f[16:]), len(f))
	}
	dirEnd := 64 + 32*count
	crc := crc32.Update(crc32.Checksum(f[:60], castagnoli), castagnoli, f[64:dirEnd])
	if crc != le.Uint32(f[60:]) {
		t.Fatalf("header checksum %08x, stored %08x", crc, le.Uint32(f[60:]))
	}

	// Directory, section checksums and content digest ("Directory",
	// "Checksums and digest").
	type key struct{ kind, order uint32 }
	sections := map[key][]byte{}
	digest := sha256.New()
	for i := 0; i < count; i++ {
		e := f[64+32*i:]
		kind, enc, order, sum := le.Uint32(e), le.Uint32(e[4:]), le.Uint32(e[8:]), le.Uint32(e[12:])
		off, n := le.Uint64(e[16:]), le.Uint64(e[24:])
		if off%8 != 0 || off < uint64(dirEnd) || off+n > uint64(len(f)) || enc != 0 {
			t.Fatalf("entry %d: offset %d length %d encoding %d", i, off, n, enc)
		}
		b := f[off : off+n]
		if crc32.Checksum(b, castagnoli) != sum {
			t.Fatalf("entry %d: checksum mismatch", i)
		}
		var rec [20]byte
		le.PutUint32(rec[0:], kind)
		le.PutUint32(rec[4:], enc)
		le.PutUint32(rec[8:], order)
		le.PutUint64(rec[12:], n)
		digest.Write(rec[:])
		digest.Write(b)
		sections[key{kind, order}] = b
	}
	if !bytes.Equal(digest.Sum(nil), f[24:56]) {
		t.Fatal("content digest mismatch")
	}

	// Summary, vocabulary and columns ("Sections").
	sum := sections[key{1, 0}]
	order, vocabSize := int(le.Uint32(sum)), int(le.Uint32(sum[4:]))
	unk := le.Uint32(sum[16:])
	counts := make([]int, order+1)
	for k := 1; k <= order; k++ {
		counts[k] = int(le.Uint64(sum[24+8*(k-1):]))
	}
	starts, text := sections[key{3, 0}], sections[key{4, 0}]
	vocab := make([]string, vocabSize)
	ids := map[string]uint32{}
	for i := range vocab {
		vocab[i] = string(text[le.Uint32(starts[4*i:]):le.Uint32(starts[4*i+4:])])
		ids[vocab[i]] = uint32(i)
	}
	var info map[string]any
	if err := json.Unmarshal(sections[key{2, 0}], &info); err != nil || info["method"] != "hand-built" {
		t.Fatalf("build info %v, err %v", info, err)
	}
	f32 := func(kind uint32, k, i int) float64 {
		return float64(math.Float32frombits(le.Uint32(sections[key{kind, uint32(k)}][4*i:])))
	}
	// Every n-gram, keyed by its words, from the trie: children of entry i
	// of order k are entries [start[i], start[i+1]) of order k+1.
	prob, backoff := map[string]float64{}, map[string]float64{}
	grams := make([][]string, vocabSize) // full n-grams of the current order
	for i := range grams {
		grams[i] = []string{vocab[i]}
	}
	for k := 1; k <= order; k++ {
		var next [][]string
		if k < order {
			next = make([][]string, counts[k+1])
		}
		for i, g := range grams {
			name := fmt.Sprint(g)
			prob[name] = f32(6, k, i)
			if k < order {
				backoff[name] = f32(7, k, i)
				cs := sections[key{8, uint32(k)}]
				for c := le.Uint32(cs[4*i:]); c < le.Uint32(cs[4*i+4:]); c++ {
					w := le.Uint32(sections[key{5, uint32(k + 1)}][4*c:])
					next[c] = append(append([]string{}, g...), vocab[w])
				}
			}
		}
		grams = next
	}

	// The back-off rule ("Queries"), with words outside the vocabulary
	// scored as <unk>.
	logProb := func(context []string, w string) float64 {
		g := append(append([]string{}, context...), w)
		for i, x := range g {
			if _, ok := ids[x]; !ok {
				g[i] = vocab[unk]
			}
		}
		if len(g) > order {
			g = g[len(g)-order:]
		}
		bow := 0.0
		for s := 0; s < len(g); s++ {
			if p, ok := prob[fmt.Sprint(g[s:])]; ok {
				return bow + p
			}
			if b, ok := backoff[fmt.Sprint(g[s:len(g)-1])]; ok && s < len(g)-1 {
				bow += b
			}
		}
		return math.Inf(-1)
	}
	data, err := os.ReadFile(filepath.Join("..", "spec", "golden", "tiny.expected.jsonl"))
	if err != nil {
		t.Fatal(err)
	}
	sc := bufio.NewScanner(bytes.NewReader(data))
	n := 0
	for sc.Scan() {
		var q struct {
			Context []string `json:"context"`
			Word    string   `json:"word"`
			Log10   float64  `json:"log10"`
		}
		if err := json.Unmarshal(sc.Bytes(), &q); err != nil {
			t.Fatal(err)
		}
		if got := logProb(q.Context, q.Word); math.Abs(got-q.Log10) > 1e-6 {
			t.Errorf("log10 P(%s | %v) = %v by the specification, expected %v", q.Word, q.Context, got, q.Log10)
		}
		n++
	}
	if n < 100 {
		t.Fatalf("only %d expected answers", n)
	}
}
