package estimate

import (
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"

	"ingot/compile/counts"
	"ingot/compile/tables"
)

// The streamed estimator finds each entry's suffix one of two ways. When
// the arrays below fit the budget, it links the orders bottom-up in one
// sequential pass each (link), the walk of tables.Links: the suffix of
// (w1..wk) is the child wk of the suffix of its prefix (w1..wk-1),
// searched (tables.SearchLast) among that node's children, which are
// contiguous in the order below; this needs the last words and child
// starts of two orders at a time in memory, and no sort.
// Otherwise it sorts the suffixes on disk and merges them with the order
// below (adjust and join).

// linkBytes returns the memory the linked passes hold at their largest
// (linkBytesAt of every order).
func (s *streamer) linkBytes() int64 {
	var need int64
	for k := 2; k <= s.N; k++ {
		need = max(need, s.linkBytesAt(k))
	}
	return need
}

// linkBytesAt returns the memory held while order k >= 2 is linked or
// estimated (see links.order): while order k is linked, the last words of
// order k-1 and the child starts of order k-2 (4 bytes an entry each),
// and, unless k is the top order, the last words of order k and the child
// starts of order k-1 that the next order's link takes (4 bytes an entry
// each); for Kneser-Ney, the adjusted counts of order k-1 (4 bytes an
// entry) and the raw counts of its entries beginning with <s> (8 bytes
// each, see startEntries); while order k is estimated, the probabilities
// of order k-1 (8 bytes an entry). It needs the entries of orders up to k
// only.
func (s *streamer) linkBytesAt(k int) int64 {
	e := func(k int) int64 {
		if k < 1 {
			return 0
		}
		return int64(s.sp.Entries[k-1])
	}
	if e(k) > math.MaxInt32 {
		return math.MaxInt64 // positions are int32 (tables.SearchLast)
	}
	b := 4*e(k-1) + 4*(e(k-2)+1)
	if k < s.N {
		b += 4*e(k) + 4*(e(k-1)+1)
	}
	if s.opt.Method == KneserNey {
		b += 4*e(k-1) + 8*s.startEntries(k-1)
	}
	return max(b, 8*e(k-1))
}

// startEntries bounds the entries of order k that begin with <s>: each
// occurs at the start of a sentence of its own, and each sentence ends
// with one </s>, so there are no more of them than </s> has counts, nor
// than the order has entries. (Counts that break that rule make the
// bound, and so the budget, short by 8 bytes an entry; the model is the
// same.)
func (s *streamer) startEntries(k int) int64 {
	n := int64(s.sp.Entries[k-1])
	if end, ok := slices.BinarySearch(s.sp.Vocab, tables.SentenceEnd); ok && end < len(s.sp.Unigrams) {
		n = min(n, int64(s.sp.Unigrams[end]))
	}
	return n
}

// overlapBytes returns the memory held at most while a Linker links an
// order and an order below it is estimated (see await): the largest link
// of one order and the largest probabilities of one order (linkBytesAt
// counts both, one at a time).
func (s *streamer) overlapBytes() int64 {
	var link, probs int64
	for k := 2; k <= s.N; k++ {
		link = max(link, s.linkBytesAt(k))
		probs = max(probs, 8*int64(s.sp.Entries[k-2]))
	}
	return link + probs
}

func (s *streamer) sufName(k int) string { return filepath.Join(s.so.Dir, fmt.Sprintf("suffix-%d", k)) }

// link passes over orders 2..N bottom-up and writes, for every entry of
// order k >= 3, the position of its suffix in order k-1 (column suffix-k)
// and its rank among its siblings (column rank-k, the key the model
// stores); for Kneser-Ney, the adjusted counts of orders 1..N-1 (the
// number of entries of the next order whose suffix each entry is; raw
// counts for n-grams starting with <s>), as adjust does. It checks that
// the counts are closed: every entry's prefix and suffix are entries.
func (s *streamer) link() error {
	l := s.newLinks()
	for k := 2; k <= s.N; k++ {
		if err := l.order(k); err != nil {
			return err
		}
	}
	return nil
}

// links is the state of link between two orders.
type links struct {
	s        *streamer
	last     []uint32 // last words of order k-1 (k >= 3)
	starts   []uint32 // child starts of order k-2 in order k-1 (k >= 3)
	startsLo uint64   // entries of order k-1 beginning with <s>: [startsLo, startsHi)
	startsHi uint64
	// held[k] is the bytes of the arrays held while order k was linked,
	// which linkBytesAt(k) bounds.
	held [tables.MaxOrder + 1]int64
}

func (s *streamer) newLinks() *links {
	s.adj1 = s.sp.Unigrams
	s.coc = make([][]float64, s.N+1)
	return &links{s: s, startsLo: uint64(s.start), startsHi: uint64(s.start) + 1}
}

// order links order k, the orders below it linked.
func (l *links) order(k int) error {
	s := l.s
	kn := s.opt.Method == KneserNey
	below := s.sp.Entries[k-2] // entries of order k-1
	var a *adjusted
	if kn {
		a = &adjusted{n: make([]uint32, below), lo: l.startsLo, raw: make([]uint64, l.startsHi-l.startsLo)}
		counts.HugePagesOf(a.n)
	}
	top := k == s.N
	var nextLast, nextStarts []uint32
	if !top {
		nextLast = make([]uint32, 0, s.sp.Entries[k-1])
		nextStarts = make([]uint32, below+1)
		// The next order's link probes both at random.
		counts.HugePagesOf(nextLast)
		counts.HugePagesOf(nextStarts)
	}
	if err := s.linkOrder(k, l.last, l.starts, l.startsLo, l.startsHi, a, &nextLast, nextStarts); err != nil {
		return err
	}
	l.held[k] = 4 * int64(len(l.last)+len(l.starts)+cap(nextLast)+len(nextStarts))
	if a != nil {
		l.held[k] += 4*int64(len(a.n)) + 8*int64(len(a.raw))
	}
	if kn {
		if k > 2 {
			s.coc[k-1] = make([]float64, s.opt.countOfCountsMax()+1)
			for i := range a.n {
				if r := a.get(i); r >= 1 && r < uint64(len(s.coc[k-1])) {
					s.coc[k-1][r]++
				}
			}
		}
		if k == 2 {
			a.raw[0] = s.sp.Unigrams[s.start]
			s.adj1 = make([]uint64, below)
			for i := range s.adj1 {
				s.adj1[i] = a.get(i)
			}
		} else if err := s.writeAdjusted(k-1, a); err != nil {
			return err
		}
	}
	if !top {
		l.startsLo, l.startsHi = uint64(nextStarts[l.startsLo]), uint64(nextStarts[l.startsHi])
	}
	l.last, l.starts = nextLast, nextStarts
	return nil
}

func (s *streamer) writeAdjusted(k int, a *adjusted) error {
	out, err := s.createCol(fmt.Sprintf("adjusted-%d", k))
	if err != nil {
		return err
	}
	for i := range a.n {
		if err := out.put64(a.get(i)); err != nil {
			out.close()
			return err
		}
	}
	return out.close()
}

// linkOrder links order k (see link): last and starts are order k-1's last
// words and order k-2's child starts (k >= 3); [lo, hi) are the entries of
// order k-1 that begin with <s>, whose adjusted counts (a, when not nil)
// are their raw counts. It appends order k's last words to *nextLast and
// counts the children of order k-1's entries into nextStarts (made child
// starts at the end), unless k is the top order.
func (s *streamer) linkOrder(k int, last, starts []uint32, lo, hi uint64, a *adjusted, nextLast *[]uint32, nextStarts []uint32) error {
	r, err := s.openOrder(k)
	if err != nil {
		return err
	}
	defer r.Close()
	var (
		prev   *counts.SpoolReader // order k-1, walked beside order k (k >= 3)
		sufIn  *colReader          // order k-1's suffix positions (k >= 4)
		sufOut *colWriter          // order k's (k >= 3)
		ranks  *colWriter
	)
	if k >= 3 {
		if prev, err = s.sp.Open(k - 1); err != nil {
			return err
		}
		defer prev.Close()
		if k >= 4 {
			if sufIn, err = openCol(s.sufName(k - 1)); err != nil {
				return err
			}
			defer sufIn.close()
		}
		if sufOut, err = s.createCol(fmt.Sprintf("suffix-%d", k)); err != nil {
			return err
		}
		defer sufOut.f.Close()
		if ranks, err = s.createCol(fmt.Sprintf("rank-%d", k)); err != nil {
			return err
		}
		defer ranks.f.Close()
	}
	// The count of raw counts, where order k's estimate uses them.
	var coc []float64
	if a == nil || nextStarts == nil {
		coc = make([]float64, s.opt.countOfCountsMax()+1)
		s.coc[k] = coc
	}
	var (
		p        = -1   // the position in order k-1 of the current prefix
		pSuf     uint32 // the position in order k-2 of its suffix (k >= 4)
		from     uint32 // where the search of the next sibling's suffix starts
		cur      = make([]uint32, k-1)
		top      = nextStarts == nil
		inPrefix = false
	)
	// advance moves the walk of order k-1 to the entry g[:k-1].
	advance := func(g []uint32) error {
		for {
			pg2, raw, err := prev.Next()
			if err == io.EOF {
				return fmt.Errorf("counts are not closed: %d-gram %q lacks its prefix", k, s.words(g))
			}
			if err != nil {
				return err
			}
			p++
			if sufIn != nil {
				if pSuf, err = sufIn.get32(); err != nil {
					return err
				}
			} else {
				pSuf = pg2[1] // k == 3: the suffix of a bigram is its last word
			}
			if a != nil && uint64(p) >= lo && uint64(p) < hi {
				a.raw[uint64(p)-lo] = raw
			}
			switch c := slices.Compare(pg2, g[:k-1]); {
			case c == 0:
				return nil
			case c > 0:
				return fmt.Errorf("counts are not closed: %d-gram %q lacks its prefix", k, s.words(g))
			}
		}
	}
	for i := 0; ; i++ {
		if i&0xffff == 0 {
			if err := s.ctx.Err(); err != nil {
				return err
			}
		}
		g, raw, err := r.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		if raw >= 1 && raw < uint64(len(coc)) {
			coc[raw]++
		}
		w := g[k-1]
		if !inPrefix || slices.Compare(cur, g[:k-1]) != 0 {
			copy(cur, g[:k-1])
			inPrefix = true
			if k == 2 {
				p = int(g[0])
			} else {
				if err := advance(g); err != nil {
					return err
				}
				from = starts[pSuf]
			}
		}
		if !top {
			*nextLast = append(*nextLast, w)
			nextStarts[p+1]++
		}
		if k == 2 {
			if a != nil {
				a.inc(uint64(w))
			}
			continue
		}
		// The suffix is the child w of the prefix's suffix, after the
		// suffix of the sibling before.
		at := tables.SearchLast(last, 1, int32(from), int32(starts[pSuf+1]), w)
		if at < 0 {
			return fmt.Errorf("counts are not closed: a %d-gram ends with %q, which has no count", k, s.words(g[1:]))
		}
		pos := uint32(at)
		if err := sufOut.put32(pos); err != nil {
			return err
		}
		if err := ranks.put32(pos - starts[pSuf]); err != nil {
			return err
		}
		from = pos + 1
		if a != nil {
			a.inc(uint64(pos))
		}
	}
	// The rest of order k-1: entries with no children, whose adjusted
	// counts may still be raw ones.
	if a != nil && k >= 3 && uint64(p+1) < hi {
		for {
			_, raw, err := prev.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				return err
			}
			p++
			if uint64(p) >= lo && uint64(p) < hi {
				a.raw[uint64(p)-lo] = raw
			}
		}
	}
	if !top {
		sum := uint32(0)
		for j, n := range nextStarts {
			sum += n
			nextStarts[j] = sum
		}
	}
	if sufOut != nil {
		if err := sufOut.close(); err != nil {
			return err
		}
		if err := ranks.close(); err != nil {
			return err
		}
	}
	return nil
}

// adjusted holds one order's Kneser-Ney adjusted counts as they are
// counted: 32 bits a count (an order has fewer than 2^32 entries), and the
// raw counts of the entries beginning with <s>, which are contiguous
// (from lo on).
type adjusted struct {
	n   []uint32
	lo  uint64
	raw []uint64
}

// inc counts one more entry above with entry i as its suffix.
func (a *adjusted) inc(i uint64) {
	if i-a.lo >= uint64(len(a.raw)) {
		a.n[i]++
	}
}

func (a *adjusted) get(i int) uint64 {
	if r := uint64(i) - a.lo; r < uint64(len(a.raw)) {
		return a.raw[r]
	}
	return uint64(a.n[i])
}
