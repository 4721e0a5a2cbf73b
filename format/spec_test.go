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

// TestSpecificationAlone reads the golden models of the tables layout
// (versions 1 and 2) the way spec/FORMAT.md tells a reader in another
// language to, using nothing of this package: it checks the header,
// checksums and digest as specified, rebuilds every n-gram from the columns
// (plain, or packed indexes into codebooks), applies the back-off rule
// literally, and compares with the expected answers. It keeps the document
// and the code in agreement. It then checks the answers against the laws
// of probability (see specSums).
func TestSpecificationAlone(t *testing.T) {
	for _, c := range []struct {
		model, expected string
		version         uint32
		tolerance       float64
	}{
		{"tiny.ingot", "tiny.expected.jsonl", 1, floatTolerance},
		{"marrowfen.q8.v2.ingot", "marrowfen.q8.expected.jsonl", 2, quantizedTolerance},
		{"marrowfen.q4.v2.ingot", "marrowfen.q4.expected.jsonl", 2, quantizedTolerance},
	} {
		t.Run(c.model, func(t *testing.T) { specAlone12(t, c.model, c.expected, c.version, c.tolerance) })
	}
}

// The largest |S(h) - 1| a context may show, where S(h) sums P(w|h) over
// every predictable word: float32 rounding of a float model (the bound of
// ESTIMATORS-style checks a correct model passes, about 1e-5), and the
// fixed tolerance ingot verify applies to quantized models (1e-3).
const (
	floatTolerance     = 1e-5
	quantizedTolerance = 1e-3
)

// specSums checks the laws of probability on a decoded model, from the
// back-off rule alone: for the empty context and every stored n-gram h
// below the highest order, P(w|h) summed over every word but <s> is
// within tolerance of one, and no answer is above one (log10 > 0) or
// NaN. It returns the largest |S(h) - 1|.
func specSums(t *testing.T, vocab []string, order int, grams [][]string, logProb func([]string, string) float64, tolerance float64) float64 {
	t.Helper()
	contexts := [][]string{{}}
	for _, g := range grams {
		if len(g) < order {
			contexts = append(contexts, g)
		}
	}
	worst := 0.0
	for _, h := range contexts {
		s := 0.0
		for _, w := range vocab {
			if w == "<s>" {
				continue
			}
			lp := logProb(h, w)
			if math.IsNaN(lp) || lp > 0 {
				t.Fatalf("log10 P(%s | %v) = %v", w, h, lp)
			}
			s += math.Pow(10, lp)
		}
		worst = max(worst, math.Abs(s-1))
		if math.Abs(s-1) > tolerance {
			t.Errorf("context %v sums to %.9f, more than %g from one", h, s, tolerance)
		}
	}
	t.Logf("%d contexts, largest |S(h) - 1| = %.3g", len(contexts), worst)
	return worst
}

func specAlone12(t *testing.T, model, expected string, version uint32, tolerance float64) {
	f, err := os.ReadFile(filepath.Join("..", "spec", "golden", model))
	if err != nil {
		t.Fatal(err)
	}
	le := binary.LittleEndian
	castagnoli := crc32.MakeTable(crc32.Castagnoli)

	// Header (FORMAT.md, "Header").
	if string(f[:8]) != "\x89INGOT\r\n" || le.Uint32(f[8:]) != version {
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
	// "Checksums and digest"). Encoding 1 (packed) is allowed on
	// probabilities and back-offs in version 2 only.
	type key struct{ kind, order uint32 }
	sections := map[key][]byte{}
	packed := map[key]bool{}
	digest := sha256.New()
	for i := 0; i < count; i++ {
		e := f[64+32*i:]
		kind, enc, order, sum := le.Uint32(e), le.Uint32(e[4:]), le.Uint32(e[8:]), le.Uint32(e[12:])
		off, n := le.Uint64(e[16:]), le.Uint64(e[24:])
		okEnc := enc == 0 || (enc == 1 && version == 2 && (kind == 6 || kind == 7))
		if off%8 != 0 || off < uint64(dirEnd) || off+n > uint64(len(f)) || !okEnc {
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
		packed[key{kind, order}] = enc == 1
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
	if err := json.Unmarshal(sections[key{2, 0}], &info); err != nil || info["method"] == nil {
		t.Fatalf("build info %v, err %v", info, err)
	}
	// A column value ("Probabilities and back-offs"): plain f32, or, with
	// encoding 1, index i of the packed stream into the codebook of the
	// same order (kind 10 for probabilities, 11 for back-offs), read as the
	// document says: the 8 bytes at 8 + floor(j/8) as a little-endian u64
	// (missing bytes past the section's end read as 0), shifted right by
	// j mod 8, low B bits.
	column := func(kind uint32, k int, i int) float64 {
		col := sections[key{kind, uint32(k)}]
		if !packed[key{kind, uint32(k)}] {
			return float64(math.Float32frombits(le.Uint32(col[4*i:])))
		}
		codebook := sections[key{kind + 4, uint32(k)}]
		L := len(codebook) / 4
		B := int(le.Uint32(col))
		if L < 1 || 1<<B < L || (B > 1 && 1<<(B-1) >= L) || le.Uint32(col[4:]) != 0 {
			t.Fatalf("kind %d order %d: B = %d for a codebook of %d levels", kind, k, B, L)
		}
		if len(col) != 8+(counts[k]*B+7)/8 {
			t.Fatalf("kind %d order %d: %d bytes, the document says %d", kind, k, len(col), 8+(counts[k]*B+7)/8)
		}
		j := i * B
		var word [8]byte
		copy(word[:], col[8+j/8:])
		index := int(le.Uint64(word[:]) >> (j % 8) & (1<<B - 1))
		if index >= L {
			t.Fatalf("kind %d order %d entry %d: index %d of %d levels", kind, k, i, index, L)
		}
		return float64(math.Float32frombits(le.Uint32(codebook[4*index:])))
	}
	for k := range sections {
		if (k.kind == 10 || k.kind == 11) && !packed[key{k.kind - 4, k.order}] {
			t.Fatalf("a codebook (kind %d, order %d) without a packed column", k.kind, k.order)
		}
	}
	// Every n-gram, keyed by its words, from the trie: children of entry i
	// of order k are entries [start[i], start[i+1]) of order k+1.
	prob, backoff := map[string]float64{}, map[string]float64{}
	var all [][]string
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
			all = append(all, g)
			prob[name] = column(6, k, i)
			if k < order {
				backoff[name] = column(7, k, i)
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
	data, err := os.ReadFile(filepath.Join("..", "spec", "golden", expected))
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
		if got := logProb(q.Context, q.Word); got != q.Log10 && !(math.IsInf(got, -1) && math.IsInf(q.Log10, -1)) {
			t.Errorf("log10 P(%s | %v) = %v by the specification, expected %v", q.Word, q.Context, got, q.Log10)
		}
		n++
	}
	if n < 100 {
		t.Fatalf("only %d expected answers", n)
	}
	specSums(t, vocab, order, all, logProb, tolerance)
}
