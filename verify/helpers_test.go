package verify

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
)

// sotu returns the training part of the first limit sentences of the
// bundled State of the Union text (CC0).
func sotu(t testing.TB, limit int) []string {
	t.Helper()
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	train, _ := corpus.Split(all, limit)
	return train
}

// build estimates a model of the given order from sentences.
func build(t testing.TB, sentences []string, order int, opt estimate.Options) *tables.Tables {
	t.Helper()
	tb, err := estimateText(sentences, order, opt)
	if err != nil {
		t.Fatal(err)
	}
	return tb
}

func estimateText(sentences []string, order int, opt estimate.Options) (*tables.Tables, error) {
	c, err := counts.NewCounter(order)
	if err != nil {
		return nil, err
	}
	for _, s := range sentences {
		c.AddSentence(strings.Fields(s))
	}
	opt.Order = order
	tb, _, err := estimate.Estimate(c.Counts(1), opt)
	return tb, err
}

// marshal writes tb in the tables layout of format versions 1 and 2, whose
// columns the damage tests edit in place; marshal3 writes version 3.
func marshal(t testing.TB, tb *tables.Tables) []byte {
	t.Helper()
	b, err := format.MarshalVersion(tb, 2)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func marshal3(t testing.TB, tb *tables.Tables) []byte {
	t.Helper()
	b, err := format.Marshal(tb)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// run verifies data and fails the test when the bytes are unreadable.
func run(t testing.TB, data []byte, opt Options) *Report {
	t.Helper()
	rep, err := Bytes(data, opt)
	if err != nil {
		t.Fatalf("unreadable: %v", err)
	}
	return rep
}

// where returns the bytes of the section of the given kind and order
// inside data (to change in place) and the section's name.
func where(t testing.TB, data []byte, kind format.SectionKind, order int) ([]byte, string) {
	t.Helper()
	count := int(binary.LittleEndian.Uint32(data[12:]))
	for i := range count {
		e := data[64+32*i:]
		if format.SectionKind(binary.LittleEndian.Uint32(e)) == kind && int(binary.LittleEndian.Uint32(e[8:])) == order {
			off, n := binary.LittleEndian.Uint64(e[16:]), binary.LittleEndian.Uint64(e[24:])
			return data[off : off+n], format.Section{Kind: kind, Order: order}.Name()
		}
	}
	t.Fatalf("no section %v of order %d", kind, order)
	return nil, ""
}

// reseal recomputes every section's CRC-32C, the content digest and the
// header checksum (of a directory that fits in data), as spec/FORMAT.md §3 and §5 define them, so that a
// change planted inside a section is caught only by what the bytes mean.
func reseal(data []byte) []byte {
	table := crc32.MakeTable(crc32.Castagnoli)
	le := binary.LittleEndian
	count := int(le.Uint32(data[12:]))
	h := sha256.New()
	for i := range count {
		e := data[64+32*i:]
		off, n := le.Uint64(e[16:]), le.Uint64(e[24:])
		if off > uint64(len(data)) || n > uint64(len(data))-off {
			continue // a damaged entry: leave it for verify to find
		}
		b := data[off : off+n]
		le.PutUint32(e[12:], crc32.Checksum(b, table))
		if le.Uint32(e) != uint32(format.KindSignature) {
			h.Write(e[0:12])
			h.Write(e[24:32])
			h.Write(b)
		}
	}
	copy(data[24:56], h.Sum(nil))
	crc := crc32.Update(crc32.Checksum(data[:60], table), table, data[64:64+32*count])
	le.PutUint32(data[60:], crc)
	return data
}

// statuses returns each check's status, by name.
func statuses(rep *Report) map[string]Status {
	out := map[string]Status{}
	for _, c := range rep.Checks {
		out[c.Name] = c.Status
	}
	return out
}

// problems joins every problem of every check, for messages.
func problems(rep *Report) string {
	var b strings.Builder
	for _, c := range rep.Checks {
		for _, p := range c.Problems {
			fmt.Fprintf(&b, "\n  %s: %s", c.Name, p)
		}
	}
	return b.String()
}

// randomTables returns a prefix-closed model with random values that is
// neither normalised nor suffix-closed, so that the normalisation pass
// takes its slow path (h'w not stored) often. counts[k-2] is the number of
// entries wanted at order k.
func randomTables(seed uint64, vocabSize int, counts []int) *tables.Tables {
	rng := rand.New(rand.NewPCG(seed, 7))
	order := len(counts) + 1
	vocab := []string{tables.SentenceStart, tables.SentenceEnd, tables.Unknown}
	for i := len(vocab); i < vocabSize; i++ {
		vocab = append(vocab, fmt.Sprintf("w%04d", i))
	}
	sort.Strings(vocab)
	tb := &tables.Tables{Vocab: vocab, Levels: make([]tables.Level, order), Info: tables.Info{Method: "random"}}
	start, _ := tb.ID(tables.SentenceStart)
	value := func(lo, hi float64) float32 { return float32(lo + (hi-lo)*rng.Float64()) }
	for id := range vocab {
		lv := &tb.Levels[0]
		lv.Words = append(lv.Words, uint32(id))
		p := value(-4, -0.5)
		if uint32(id) == start {
			p = tables.NoProb
		}
		lv.LogProb = append(lv.LogProb, p)
	}
	for k := 2; k <= order; k++ {
		prev := &tb.Levels[k-2]
		seen := map[string]bool{}
		var grams [][]uint32
		for range counts[k-2] {
			p := rng.IntN(len(prev.LogProb))
			w := uint32(rng.IntN(vocabSize))
			if w == start {
				continue
			}
			g := append(slices.Clone(prev.Words[(k-1)*p:(k-1)*p+k-1]), w)
			if key := fmt.Sprint(g); !seen[key] {
				seen[key] = true
				grams = append(grams, g)
			}
		}
		slices.SortFunc(grams, tables.Compare)
		lv := &tb.Levels[k-1]
		for _, g := range grams {
			lv.Words = append(lv.Words, g...)
			lv.LogProb = append(lv.LogProb, value(-3, -0.05))
		}
	}
	for k := 1; k < order; k++ {
		lv := &tb.Levels[k-1]
		lv.LogBackoff = make([]float32, len(lv.LogProb))
		for i := range lv.LogBackoff {
			lv.LogBackoff[i] = value(-1, 0.3)
		}
	}
	return tb
}
