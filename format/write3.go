package format

import (
	"bytes"
	"fmt"
	"math"
	"runtime"
	"sync"

	"ingot/compile/tables"
)

// Version 3 stores the trie succinctly (spec/FORMAT.md §4.8 to §4.11):
//
//   - child starts of each order in Elias-Fano;
//   - the last word of each entry of order k >= 2 as a key under its
//     parent: the word id itself, or, at an order k >= 3 where every entry's
//     suffix h'w is stored, the rank of w among the successors of h' (its
//     parent's suffix), which is far smaller (G. E. Pibiri and R. Venturini,
//     "Efficient data structures for massive n-gram datasets", SIGIR 2017).
//     Keys are made one non-decreasing sequence per order by adding to each
//     sibling list the last value of the list before, and stored in
//     Elias-Fano;
//   - a mark per entry of each order below the top saying whether it is a
//     context: it has children, or a back-off weight other than +0.0
//     (weight 1). Child starts and back-off weights are stored for the
//     contexts only, found by the rank of the entry among them;
//   - a hash table of the words, so that Model.ID costs a few reads.

// buildSections3 lays out the sections of a version-3 file: summary, build
// info, word starts, word text, word hash, then per order its last words
// (k >= 2), probabilities, contexts, back-offs and child starts
// (k < N).
func buildSections3(t *tables.Tables) ([]section, error) {
	n := t.Order()
	info, err := marshalInfo(t.Info)
	if err != nil {
		return nil, fmt.Errorf("ingot model: cannot write build info: %w", err)
	}
	if len(info) > MaxBuildInfo {
		return nil, fmt.Errorf("ingot model: cannot write: build info of %d bytes exceeds %d (too many history lines or options?)", len(info), MaxBuildInfo)
	}
	if wordHashSlots(len(t.Vocab)) > 1<<32-1 {
		return nil, fmt.Errorf("ingot model: cannot write: a vocabulary of %d words is too large for the word hash", len(t.Vocab))
	}
	links := linksOf(t)
	out := append([]section{
		{Section: Section{Kind: KindSummary}, data: summaryBytes(t, links)},
		{Section: Section{Kind: KindBuildInfo}, data: info},
	}, vocabularySections3(t.Vocab)...)
	childStarts := links.Starts // [k-1]: n_k+1 starts of order k < N
	// The orders' sections are independent: built on GOMAXPROCS workers,
	// placed in order.
	perOrder := make([][]section, n)
	work := make(chan int, n)
	for k := n; k >= 1; k-- {
		work <- k
	}
	close(work)
	var wg sync.WaitGroup
	for range min(runtime.GOMAXPROCS(0), n) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range work {
				perOrder[k-1] = orderSections3(t, k, childStarts, links)
			}
		}()
	}
	wg.Wait()
	for _, secs := range perOrder {
		out = append(out, secs...)
	}
	return out, nil
}

// orderSections3 returns the sections of order k: its last words (k >= 2),
// probabilities, contexts, back-offs and child starts (k < N).
func orderSections3(t *tables.Tables, k int, childStarts [][]uint32, links *tables.Links) []section {
	n := t.Order()
	lv := &t.Levels[k-1]
	var out []section
	if k >= 2 {
		data, enc := lastWordKeys(t, k, childStarts, links)
		out = append(out, section{Section: Section{Kind: KindLastWords, Order: k, Encoding: enc}, data: data})
	}
	out = append(out, columnSections(KindProbabilities, KindProbCodebook, k, lv.LogProb, lv.ProbCodebook, true)...)
	if k < n {
		starts := childStarts[k-1]
		isContext := contextsOf(t, k, childStarts)
		out = append(out, section{Section: Section{Kind: KindContexts, Order: k}, data: encodeMarks(len(lv.LogBackoff), isContext)})
		kept := make([]float32, 0, len(lv.LogBackoff))
		x := make([]uint32, 0, len(lv.LogBackoff)+1)
		for i, b := range lv.LogBackoff {
			if isContext(i) {
				kept = append(kept, b)
				x = append(x, starts[i])
			}
		}
		x = append(x, starts[len(starts)-1])
		out = append(out, columnSections(KindBackoffs, KindBackoffCodebook, k, kept, lv.BackoffCodebook, true)...)
		out = append(out, section{Section: Section{Kind: KindChildStarts, Order: k, Encoding: EliasFano}, data: encodeEliasFano(x)})
	}
	return out
}

// hasBackoff reports whether a log10 back-off weight is stored in version
// 3: every value but +0.0 (weight 1), which unmarked entries read as.
func hasBackoff(b float32) bool { return math.Float32bits(b) != 0 }

// childStartValues returns the n_k+1 child starts of order k: entry i's
// children at order k+1 are [start[i], start[i+1]). Entries of order k+1 are
// sorted, and their k-word prefixes are stored at order k in the same order,
// so one merge pass finds every parent.
func childStartValues(t *tables.Tables, k int) []uint32 {
	nk, next := t.Len(k), t.Len(k+1)
	out := make([]uint32, nk+1)
	parent := 0
	for e := 0; e < next; e++ {
		prefix := t.Gram(k+1, e)[:k]
		for parent < nk && tables.Compare(t.Gram(k, parent), prefix) < 0 {
			parent++
		}
		out[parent+1]++ // Check guarantees the prefix is stored
	}
	for i := 1; i <= nk; i++ {
		out[i] += out[i-1]
	}
	return out
}

// lastWordKeys encodes the last words of order k >= 2 as keys under their
// parents (wordKeys), in sibling lists (encodeKeyLists) or in one
// Elias-Fano sequence for the order, whichever is shorter (lists when
// equal): lists cost the bits of each list's largest key per key plus a
// list start per context below, which pays where lists are short and
// their keys small (successor ranks at the higher orders), while one
// sequence codes long lists of word ids closer to their entropy.
func lastWordKeys(t *tables.Tables, k int, childStarts [][]uint32, links *tables.Links) ([]byte, Encoding) {
	keys, enc := wordKeys(t, k, childStarts, links)
	starts, isContext := childStarts[k-2], contextsOf(t, k-1, childStarts)
	switch p := planKeys(keys, starts, isContext); p.form {
	case formCoded:
		return listsSection(keys, starts, isContext, true, p.m, p.coded), codedEncoding(enc)
	case formLists:
		return listsSection(keys, starts, isContext, false, p.m, p.lists), listEncoding(enc)
	}
	return encodeShifted(keys, starts), enc
}

// The forms an order's keys are stored in.
const (
	formOne   = iota // one Elias-Fano sequence (§4.8.2)
	formLists        // key lists (§4.8.7)
	formCoded        // coded key lists (§4.8.8)
)

// chooseKeysForm returns the form the writer stores an order's keys in,
// from the section lengths of the three: coded lists when shorter than
// both others, else key lists when not longer than one sequence.
func chooseKeysForm(one, lists, coded int64) int {
	switch {
	case coded < min(one, lists):
		return formCoded
	case lists <= one:
		return formLists
	}
	return formOne
}

// keysPlan is what the writer decides for an order's keys: the form
// (chooseKeysForm), the length of its section, and what the list forms'
// sections are made from: the m contexts below and both forms' bits
// (listTotals).
type keysPlan struct {
	form            int
	length          int64
	m, lists, coded uint64
}

// planKeys returns the writer's plan for an order's keys.
func planKeys[K key](keys []K, starts []uint32, isContext func(int) bool) keysPlan {
	var p keysPlan
	p.m, p.lists, p.coded = listTotals(keys, starts, isContext)
	lengths := [...]int64{
		formOne:   efLength(uint64(len(keys)), shiftedLast(keys, starts)),
		formLists: keyListsLength(p.m, p.lists),
		formCoded: keyListsLength(p.m, p.coded),
	}
	p.form = chooseKeysForm(lengths[formOne], lengths[formLists], lengths[formCoded])
	p.length = lengths[p.form]
	return p
}

// shiftedLast is the last value of the shifted keys (encodeShifted): the
// sum of every sibling list's last key.
func shiftedLast[K key](keys []K, starts []uint32) uint64 {
	var last uint64
	for p := 0; p+1 < len(starts); p++ {
		if starts[p+1] > starts[p] {
			last += uint64(keys[starts[p+1]-1])
		}
	}
	return last
}

// encodeShifted returns the Elias-Fano section of an order's keys made one
// non-decreasing sequence: each sibling list shifted by the last value of
// the list before it.
func encodeShifted[K key](keys []K, starts []uint32) []byte {
	n, last := uint64(len(keys)), shiftedLast(keys, starts)
	out := make([]byte, efLength(n, last))
	w := newEFWriter(out, n, last)
	var base uint64
	for p := 0; p+1 < len(starts); p++ {
		list := keys[starts[p]:starts[p+1]]
		for _, k := range list {
			w.add(base + uint64(k))
		}
		if len(list) > 0 {
			base += uint64(list[len(list)-1])
		}
	}
	return out
}

// listEncoding is the key-lists encoding with the keys of enc.
func listEncoding(enc Encoding) Encoding {
	if enc == EliasFanoRanks {
		return ListRanks
	}
	return ListIDs
}

// codedEncoding is the coded-lists encoding with the keys of enc.
func codedEncoding(enc Encoding) Encoding {
	if enc == EliasFanoRanks {
		return CodedListRanks
	}
	return CodedListIDs
}

// contextsOf returns whether entry i of order k < N is a context: it has
// children or a back-off weight other than +0.0.
func contextsOf(t *tables.Tables, k int, childStarts [][]uint32) func(i int) bool {
	starts, lv := childStarts[k-1], &t.Levels[k-1]
	return func(i int) bool { return starts[i+1] > starts[i] || hasBackoff(lv.LogBackoff[i]) }
}

// lastWordKeysEF encodes the last words of order k >= 2 as keys under
// their parents (wordKeys), one non-decreasing Elias-Fano sequence per
// order (encodings EliasFano and EliasFanoRanks, which version-3 files
// written before key lists hold).
func lastWordKeysEF(t *tables.Tables, k int, childStarts [][]uint32, links *tables.Links) ([]byte, Encoding) {
	keys, enc := wordKeys(t, k, childStarts, links)
	return encodeShifted(keys, childStarts[k-2]), enc
}

// lastWordKeysListed encodes the last words of order k >= 2 in key lists
// whatever their length (encodings ListIDs and ListRanks).
func lastWordKeysListed(t *tables.Tables, k int, childStarts [][]uint32, links *tables.Links) ([]byte, Encoding) {
	keys, enc := wordKeys(t, k, childStarts, links)
	return encodeKeyLists(keys, childStarts[k-2], contextsOf(t, k-1, childStarts)), listEncoding(enc)
}

// wordKeys returns the keys of the last words of order k >= 2 under their
// parents: ranks among the successors of the parent's suffix when every
// entry's suffix is stored and k >= 3 (encoding EliasFanoRanks), word ids
// otherwise (EliasFano). links are the tables' (linksOf).
func wordKeys(t *tables.Tables, k int, childStarts [][]uint32, links *tables.Links) ([]uint32, Encoding) {
	n := t.Len(k)
	if k >= 3 {
		ranks := make([]uint32, n)
		parents, suffixes, contexts := links.Parent[k-1], links.Suffix[k-1], links.Suffix[k-2]
		ok := true
		for e := 0; e < n; e++ {
			suffix := suffixes[e]           // h'w, order k-1
			context := contexts[parents[e]] // h', order k-2
			if suffix < 0 || context < 0 {
				ok = false
				break
			}
			ranks[e] = uint32(suffix) - childStarts[k-3][context]
		}
		if ok {
			return ranks, EliasFanoRanks
		}
	}
	keys := make([]uint32, n)
	for e := 0; e < n; e++ {
		keys[e] = t.Gram(k, e)[k-1]
	}
	return keys, EliasFano
}

// linksOf returns the links of the tables' orders (tables.Link), which
// Check has made sure are prefix-closed: the ones the tables carry when
// they have one link per entry of every order.
func linksOf(t *tables.Tables) *tables.Links {
	if l := t.Links; l != nil && len(l.Parent) == t.Order() && len(l.Starts) == t.Order()-1 {
		fits := true
		for k := 2; k <= t.Order(); k++ {
			fits = fits && len(l.Parent[k-1]) == t.Len(k) && len(l.Suffix[k-1]) == t.Len(k) && len(l.Starts[k-2]) == t.Len(k-1)+1
		}
		if fits {
			return l
		}
	}
	words := make([][]uint32, t.Order())
	for k := 2; k <= t.Order(); k++ {
		words[k-1] = t.Levels[k-1].Words
	}
	l, err := tables.Link(len(t.Vocab), words)
	if err != nil {
		panic("format: tables not prefix-closed after Check: " + err.Error())
	}
	return l
}

// lastWordKeysCoded encodes the last words of order k >= 2 in coded key
// lists whatever their length (encodings CodedListIDs and CodedListRanks).
func lastWordKeysCoded(t *tables.Tables, k int, childStarts [][]uint32, links *tables.Links) ([]byte, Encoding) {
	keys, enc := wordKeys(t, k, childStarts, links)
	return encodeCodedLists(keys, childStarts[k-2], contextsOf(t, k-1, childStarts)), codedEncoding(enc)
}

// MarshalCodedLists is Marshal (version 3) with the last words of every
// order stored in coded key lists (encodings CodedListIDs and
// CodedListRanks, spec/FORMAT.md §4.8.8) whether or not they are the
// shortest form: small files that exercise a reader's coded-list path.
func MarshalCodedLists(t *tables.Tables) ([]byte, error) {
	return marshalKeys(t, lastWordKeysCoded)
}

// marshalKeys is Marshal (version 3) with every order's last words
// encoded by keysOf.
func marshalKeys(t *tables.Tables, keysOf func(t *tables.Tables, k int, childStarts [][]uint32, links *tables.Links) ([]byte, Encoding)) ([]byte, error) {
	if err := checkWritable(t); err != nil {
		return nil, err
	}
	sections, err := buildSections3(t)
	if err != nil {
		return nil, err
	}
	links := linksOf(t)
	for i := range sections {
		if s := &sections[i]; s.Kind == KindLastWords {
			s.data, s.Encoding = keysOf(t, s.Order, links.Starts, links)
		}
	}
	var b bytes.Buffer
	if err := writeFile(&b, assemble(sections, 3), sections); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// MarshalKeyLists is Marshal (version 3) with the last words of every
// order stored in key lists (encodings ListIDs and ListRanks,
// spec/FORMAT.md §4.8.7) whether or not they are shorter than one
// Elias-Fano sequence: small files that exercise a reader's key-list path,
// which Marshal chooses only where lists are shorter, as on large models.
func MarshalKeyLists(t *tables.Tables) ([]byte, error) {
	return marshalKeys(t, lastWordKeysListed)
}
