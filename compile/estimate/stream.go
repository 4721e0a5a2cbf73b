package estimate

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"slices"

	"ingot/compile/counts"
	"ingot/compile/extsort"
	"ingot/compile/tables"
)

// Sink receives the model's entries as the streamed estimator finishes
// them: order by order, each order in the sort order of package tables
// (format.StreamWriter is one). rank is, for an entry of order k >= 3, the
// position of its suffix among the entries sharing the suffix's context;
// children is the number of entries of the next order extending it.
type Sink interface {
	Add(ids []uint32, rank uint32, logProb, logBackoff float32, children uint64) error
}

// StreamOptions bounds the streamed estimator.
type StreamOptions struct {
	// Memory is the budget in bytes for two orders' links (see link) or,
	// when they do not fit, the sort buffers, beyond which sorted runs
	// spill to Dir.
	Memory int64
	// Dir is an existing directory for the estimator's files (columns of
	// values and sort runs). The caller removes it.
	Dir string
	// Log receives the passes and spills; nil: none.
	Log *slog.Logger
	// Linker, when not nil, has linked the orders as they were spooled
	// (see Linker); EstimateStreamed takes its links where they are its
	// own, and closes it.
	Linker *Linker
	// Top, when not nil, takes the entries of the top order N >= 2 (the
	// sink then takes orders 1..N-1), on a goroutine of its own, as the
	// top order is estimated, while the sink still takes the order below
	// (format.StreamWriter.Top).
	Top Sink
}

// StreamResult is what the streamed estimator reports: the same Report as
// Estimate, and the model's build information (method, discounts, rules
// applied, the empty context's weight).
type StreamResult struct {
	Report *Report
	Info   tables.Info
	// Linked: every order's suffixes were found in memory, in one
	// sequential pass per order and no sort (the budget held two orders'
	// links); otherwise by sorts on disk.
	Linked bool
	// LinkedAhead: those links were the Linker's, made while the counts
	// were spooled.
	LinkedAhead bool
	Runs        int   // sort runs spilled to disk
	Bytes       int64 // bytes of those runs
}

// EstimateStreamed computes exactly the model Estimate computes (the same
// float64 arithmetic in the same order, so the same bits), from spooled
// counts, without holding any order in memory: every quantity that needs
// one order's n-grams looked up from another's (Kneser-Ney adjusted
// counts, lower-order probabilities, ranks of suffixes, prefixes' back-off
// weights and children) is found in sequential passes: suffixes by linking
// each order to the one below in memory when two orders' links fit
// so.Memory (link), else by sorting one side on disk and merging it with
// the other, sorted, side. Orders are estimated bottom-up as in
// Estimate; the entries of order k-1 go to sink while order k is
// estimated (their back-off weights are then final), order N's at the end.
// The sink is called on a goroutine of its own (in the same order), so
// that writing the model takes a second core; it is done with when
// EstimateStreamed returns.
//
// Memory: the vocabulary, its unigram values, the largest set of
// successors of one context, and two orders' links or the sort buffers
// (at most about so.Memory).
func EstimateStreamed(ctx context.Context, sp *counts.Spooled, opt Options, so StreamOptions, sink Sink) (*StreamResult, error) {
	if so.Linker != nil {
		defer so.Linker.Close()
	}
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	if opt.Survivors != nil {
		return nil, fmt.Errorf("the streamed estimator does not take survivors")
	}
	if opt.UnigramsBackedOff && opt.Method == KneserNey {
		return nil, fmt.Errorf("the streamed estimator writes Kneser-Ney in its interpolated form only")
	}
	if sp.Order() != opt.Order {
		return nil, fmt.Errorf("counts hold orders up to %d, order %d asked", sp.Order(), opt.Order)
	}
	log := so.Log
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	async := newAsyncSink(sink)
	defer async.close()
	s := newStreamer(ctx, sp, opt, so, log)
	s.sink = async
	defer s.cleanup()
	if err := s.run(); err != nil {
		return nil, err
	}
	if err := async.close(); err != nil {
		return nil, err
	}
	info := tables.Info{Method: string(opt.Method), EmptyContextLogBackoff: math.Log10(s.empty)}
	for _, r := range s.report.Orders {
		m := map[string]float64{}
		for _, p := range r.Discounts {
			m[p.Name] = p.Value
		}
		info.Discounts = append(info.Discounts, m)
		info.Fallbacks = append(info.Fallbacks, r.Fallbacks...)
	}
	return &StreamResult{Report: s.report, Info: info, Linked: s.linked, LinkedAhead: s.linkedAhead, Runs: s.runs, Bytes: s.spilled}, nil
}

type streamer struct {
	ctx    context.Context
	sp     *counts.Spooled
	opt    Options
	so     StreamOptions
	log    *slog.Logger
	sink   *asyncSink
	N      int
	V      float64
	start  uint32
	adj1   []uint64  // Kneser-Ney adjusted unigram counts
	prob1  []float64 // unigram probabilities
	empty  float64
	report *Report
	// linked: the suffixes were found by link (in memory, no sort), not
	// by adjust and join.
	linked bool
	// linkedAhead: by a Linker as the counts were spooled.
	linkedAhead bool
	ahead       *Linker      // the linker whose links are taken (takes)
	tail        *counts.Tail // the order linked behind its spool (Linker)
	totals      *estimator   // for exactTotal
	// coc[k], when not nil, is order k's count of counts (of adjusted
	// counts where the order uses them), counted by link.
	coc   [][]float64
	files []string
	runs  int
	// spilled counts the bytes of sort runs.
	spilled int64
}

// newStreamer makes the streamer of the model opt asks for on the spooled
// counts sp (no sink: set one to write).
func newStreamer(ctx context.Context, sp *counts.Spooled, opt Options, so StreamOptions, log *slog.Logger) *streamer {
	start, _ := slices.BinarySearch(sp.Vocab, tables.SentenceStart)
	return &streamer{ctx: ctx, sp: sp, opt: opt, so: so, log: log, N: opt.Order,
		V: float64(len(sp.Vocab) - 1), start: uint32(start), report: &Report{Method: opt.Method}}
}

func (s *streamer) cleanup() {
	for _, f := range s.files {
		os.Remove(f)
	}
}

func (s *streamer) path(name string) string {
	p := filepath.Join(s.so.Dir, name)
	s.files = append(s.files, p)
	return p
}

func (s *streamer) words(g []uint32) string {
	out := ""
	for i, id := range g {
		if i > 0 {
			out += " "
		}
		out += s.sp.Vocab[id]
	}
	return out
}

// sorter returns a sorter of records of width words ordered by their first
// key words (stable), with a share of the memory, room made for the
// records that will be added.
func (s *streamer) sorter(name string, width, key int, share int64, records uint64) *extsort.Sorter {
	st := extsort.NewKeyed(s.so.Dir, name, width, key, max(s.so.Memory/share, 64<<10))
	st.Expect(int(records))
	return st
}

func (s *streamer) sorted(st *extsort.Sorter, what string) (*extsort.Iter, error) {
	it, err := st.Sort()
	if err != nil {
		return nil, err
	}
	if st.Runs() > 0 {
		s.runs += st.Runs()
		s.spilled += st.Spilled()
		s.log.Info("sorted on disk", "what", what, "runs", st.Runs(), "bytes", st.Spilled())
	}
	return it, nil
}

func (s *streamer) run() error {
	s.linked = s.linkBytes() <= s.so.Memory
	useLinks := s.linked && (s.N >= 3 || s.opt.Method == KneserNey)
	if l := s.so.Linker; l != nil && !(useLinks && s.takes(l)) {
		// s links or sorts itself, to columns of the names the linker
		// uses: it must be done with them, and they gone, first.
		l.wait()
		l.drop()
	}
	switch {
	case useLinks:
		if s.ahead != nil {
			s.linkedAhead = true
			s.log.Info("linking orders in memory", "bytes", s.linkBytes(), "as spooled", true)
			break
		}
		s.log.Info("linking orders in memory", "bytes", s.linkBytes())
		if err := s.link(); err != nil {
			return err
		}
	case s.linked:
	case s.opt.Method == KneserNey:
		if err := s.adjust(); err != nil {
			return err
		}
	}
	// With a linker's links, order k is estimated as soon as orders up
	// to k+1 are linked (its adjusted counts are counted linking k+1),
	// while the linker links the orders above, where the budget holds
	// both at once; else once every order is linked.
	first := 2
	if s.overlapBytes() > s.so.Memory {
		first = s.N
	}
	if err := s.await(first); err != nil {
		return err
	}
	if err := s.unigrams(); err != nil {
		return s.linkerFirst(err)
	}
	for k := 2; k <= s.N; k++ {
		if err := s.await(k + 1); err != nil {
			return err
		}
		s.log.Info("estimating", "order", k, "entries", s.sp.Entries[k-1])
		if err := s.order(k); err != nil {
			return s.linkerFirst(err)
		}
	}
	if s.so.Top != nil && s.N >= 2 {
		return nil // the top order went to so.Top as it was estimated
	}
	return s.emitTop()
}

func (s *streamer) adjName(k int) string {
	return filepath.Join(s.so.Dir, fmt.Sprintf("adjusted-%d", k))
}
func (s *streamer) probName(k int) string { return filepath.Join(s.so.Dir, fmt.Sprintf("prob-%d", k)) }
func (s *streamer) rankName(k int) string { return filepath.Join(s.so.Dir, fmt.Sprintf("rank-%d", k)) }

// adjust computes the Kneser-Ney adjusted counts of orders 1..N-1 (see
// estimator.adjust): a(g) is the number of entries of the next order whose
// suffix is g, found by sorting those suffixes and merging them with the
// order's entries; raw counts for n-grams starting with <s>.
func (s *streamer) adjust() error {
	s.adj1 = slices.Clone(s.sp.Unigrams)
	if s.N == 1 {
		return nil
	}
	for k := s.N - 1; k >= 1; k-- {
		if k == 1 {
			a := make([]uint64, len(s.sp.Vocab))
			err := s.each(2, func(g []uint32, _ uint64) error {
				a[g[1]]++
				return nil
			})
			if err != nil {
				return err
			}
			a[s.start] = s.sp.Unigrams[s.start]
			s.adj1 = a
			continue
		}
		st := s.sorter(fmt.Sprintf("suffix-%d", k+1), k, k, 2, s.sp.Entries[k])
		err := s.each(k+1, func(g []uint32, _ uint64) error { return st.Add(g[1:]) })
		if err != nil {
			return err
		}
		it, err := s.sorted(st, fmt.Sprintf("suffixes of order %d", k+1))
		if err != nil {
			return err
		}
		err = s.adjustOrder(k, it)
		it.Close()
		if err != nil {
			return err
		}
	}
	return nil
}

// adjustOrder writes order k's adjusted counts from the sorted suffixes of
// order k+1.
func (s *streamer) adjustOrder(k int, it *extsort.Iter) error {
	out, err := s.createCol(fmt.Sprintf("adjusted-%d", k))
	if err != nil {
		return err
	}
	suf, ok, err := it.Next()
	if err != nil {
		return err
	}
	err = s.each(k, func(g []uint32, raw uint64) error {
		var a uint64
		for ok && tables.Compare(suf, g) <= 0 {
			if tables.Compare(suf, g) < 0 {
				return fmt.Errorf("counts are not closed: a %d-gram ends with %q, which has no count", k+1, s.words(suf))
			}
			a++
			if suf, ok, err = it.Next(); err != nil {
				return err
			}
		}
		if g[0] == s.start {
			a = raw
		}
		return out.put64(a)
	})
	if err != nil {
		out.close()
		return err
	}
	if ok {
		out.close()
		return fmt.Errorf("counts are not closed: a %d-gram ends with %q, which has no count", k+1, s.words(suf))
	}
	return out.close()
}

// each calls fn with every entry of order k >= 2 in order.
func (s *streamer) each(k int, fn func(g []uint32, n uint64) error) error {
	r, err := s.sp.Open(k)
	if err != nil {
		return err
	}
	defer r.Close()
	for i := 0; ; i++ {
		if i&0xffff == 0 {
			if err := s.ctx.Err(); err != nil {
				return err
			}
		}
		g, n, err := r.Next()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
		if err := fn(g, n); err != nil {
			return err
		}
	}
}

func (s *streamer) counts(k int) []uint64 {
	if s.opt.Method == KneserNey {
		return s.adj1
	}
	return s.sp.Unigrams
}

// unigrams estimates order 1 as estimator.order does.
func (s *streamer) unigrams() error {
	rep := OrderReport{Order: 1, NGrams: len(s.sp.Vocab)}
	cnt := s.counts(1)
	n := countOfCounts(cnt, s.opt.countOfCountsMax())
	disc := s.opt.discounter(1, n, &rep)
	var t tally
	prob, bow, err := unigramLevel(cnt, s.start, s.V, disc, &t, s.exactTotal)
	if err != nil {
		return err
	}
	s.opt.noteFallbacks(1, n, &t, &rep)
	s.empty = bow
	rep.Contexts = 1
	s.report.Orders = append(s.report.Orders, rep)
	s.prob1 = prob
	for i, p := range prob {
		if uint32(i) != s.start && bad(p) {
			return s.wrap(fmt.Errorf("order %d n-gram %q gets probability %v; no model is written", 1, s.sp.Vocab[i], p))
		}
	}
	if bad(s.empty) {
		return s.wrap(fmt.Errorf("the empty context gets back-off weight %v; no model is written", s.empty))
	}
	return nil
}

func bad(x float64) bool { return !(x > 0) || math.IsInf(x, 0) || math.IsNaN(x) }

func (s *streamer) wrap(err error) error {
	if s.opt.Method == Absolute && !s.opt.AutoDiscount {
		return &OptionError{Option: "discount", Value: s.opt.Discount, Err: err}
	}
	return err
}

// exactTotal is estimator.exactTotal; the estimator, which needs the
// vocabulary only (for messages), is made once: one per context cost an
// allocation each.
func (s *streamer) exactTotal(k int, cnt []uint64, context []uint32) (float64, error) {
	if s.totals == nil {
		s.totals = &estimator{c: &counts.Counts{Vocab: s.sp.Vocab}}
	}
	return s.totals.exactTotal(k, cnt, context)
}

// lowerWalk walks the entries of order k-1 (the contexts of order k) in
// order, handing each to the sink with its back-off weight and children
// once order k has said them.
type lowerWalk struct {
	s      *streamer
	k      int // order of the walked entries
	i      int // index of the current entry
	n      int
	r      *counts.SpoolReader // k >= 2
	probs  *colReader          // k >= 2, unless mem
	mem    []float64           // the probabilities, when in memory
	ranks  *colReader          // k >= 3
	cur    []uint32
	prob   float64
	rank   uint32
	badBow error
}

// newLowerWalk starts a walk of order k's entries; probs, when not nil,
// are their probabilities (else read from the column prob-k).
func (s *streamer) newLowerWalk(k int, probs []float64) (*lowerWalk, error) {
	w := &lowerWalk{s: s, k: k, i: -1, n: int(s.sp.Entries[k-1]), cur: make([]uint32, k), mem: probs}
	if k >= 2 {
		var err error
		if w.r, err = s.sp.Open(k); err != nil {
			return nil, err
		}
		if probs == nil {
			if w.probs, err = openCol(s.probName(k)); err != nil {
				w.close()
				return nil, err
			}
		}
		if k >= 3 {
			if w.ranks, err = openCol(s.rankName(k)); err != nil {
				w.close()
				return nil, err
			}
		}
	}
	return w, w.advance()
}

func (w *lowerWalk) close() {
	if w.r != nil {
		w.r.Close()
	}
	if w.probs != nil {
		w.probs.close()
	}
	if w.ranks != nil {
		w.ranks.close()
	}
}

// advance moves to the next entry (i == n at the end).
func (w *lowerWalk) advance() error {
	w.i++
	if w.i >= w.n {
		return nil
	}
	if w.k == 1 {
		w.cur[0] = uint32(w.i)
		w.prob = w.s.prob1[w.i]
		return nil
	}
	g, _, err := w.r.Next()
	if err != nil {
		if err == io.EOF {
			return fmt.Errorf("spooled order %d ends early", w.k)
		}
		return err
	}
	w.cur = g // the reader's ids, valid until the next advance
	if w.mem != nil {
		w.prob = w.mem[w.i]
	} else {
		bits, err := w.probs.get64()
		if err != nil {
			return err
		}
		w.prob = math.Float64frombits(bits)
	}
	if w.ranks != nil {
		if w.rank, err = w.ranks.get32(); err != nil {
			return err
		}
	}
	return nil
}

// emit hands the current entry to the sink and advances.
func (w *lowerWalk) emit(bow float64, children uint64, top bool) error {
	if !top && bad(bow) && w.badBow == nil {
		w.badBow = w.s.wrap(fmt.Errorf("order %d context %q gets back-off weight %v (no mass left for unseen words); no model is written", w.k, w.s.words(w.cur), bow))
	}
	if w.badBow == nil {
		noProb := w.k == 1 && uint32(w.i) == w.s.start
		if err := w.s.sink.add(w.cur, w.rank, w.prob, bow, children, noProb, top); err != nil {
			return err
		}
	}
	return w.advance()
}

// seek emits every entry before g with weight 1 and no children, and
// reports whether the walk then stands on g.
func (w *lowerWalk) seek(g []uint32) (bool, error) {
	for w.i < w.n {
		c := tables.Compare(w.cur, g)
		if c == 0 {
			return true, nil
		}
		if c > 0 {
			return false, nil
		}
		if err := w.emit(1, 0, false); err != nil {
			return false, err
		}
	}
	return false, nil
}

// finish emits the remaining entries with weight 1.
func (w *lowerWalk) finish() error {
	for w.i < w.n {
		if err := w.emit(1, 0, false); err != nil {
			return err
		}
	}
	return nil
}

// joined yields, for the entries of order k >= 3 in order, the probability
// of each one's suffix at order k-1 and the suffix's rank among its
// siblings.
type joined struct {
	it *extsort.Iter
}

func (j *joined) next() (float64, uint32, error) {
	rec, ok, err := j.it.Next()
	if err != nil {
		return 0, 0, err
	}
	if !ok {
		return 0, 0, fmt.Errorf("suffix join ends early")
	}
	return math.Float64frombits(uint64(rec[1]) | uint64(rec[2])<<32), rec[3], nil
}

// join sorts the suffixes of order k's entries, merges them with order
// k-1 (its entries, probabilities, and the ranks within their sibling
// lists), and sorts the result back into order k's entry order.
func (s *streamer) join(k int) (*joined, error) {
	// Ordered by the suffix; the entry index, added in increasing order,
	// keeps its order among equal suffixes (a stable sort).
	st := s.sorter(fmt.Sprintf("join-%d", k), k, k-1, 3, s.sp.Entries[k-1])
	j := uint32(0)
	rec := make([]uint32, k)
	err := s.each(k, func(g []uint32, _ uint64) error {
		copy(rec, g[1:])
		rec[k-1] = j
		j++
		return st.Add(rec)
	})
	if err != nil {
		return nil, err
	}
	it, err := s.sorted(st, fmt.Sprintf("suffixes of order %d", k))
	if err != nil {
		return nil, err
	}
	defer it.Close()
	back := s.sorter(fmt.Sprintf("back-%d", k), 4, 1, 3, s.sp.Entries[k-1]) // by entry index
	r, err := s.sp.Open(k - 1)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	probs, err := openCol(s.probName(k - 1))
	if err != nil {
		return nil, err
	}
	defer probs.close()
	cur := make([]uint32, k-1)
	have := false
	var prob uint64
	var rank uint32
	var out [4]uint32
	for {
		suf, ok, err := it.Next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		key := suf[:k-1]
		for !have || tables.Compare(cur, key) < 0 {
			g, _, err := r.Next()
			if err == io.EOF {
				have = false
				break
			}
			if err != nil {
				return nil, err
			}
			if have && tables.Compare(cur[:k-2], g[:k-2]) == 0 {
				rank++
			} else {
				rank = 0
			}
			copy(cur, g)
			have = true
			if prob, err = probs.get64(); err != nil {
				return nil, err
			}
		}
		if !have || tables.Compare(cur, key) != 0 {
			return nil, fmt.Errorf("counts are not closed: a %d-gram ends with %q, which has no count", k, s.words(key))
		}
		out[0], out[1], out[2], out[3] = suf[k-1], uint32(prob), uint32(prob>>32), rank
		if err := back.Add(out[:]); err != nil {
			return nil, err
		}
	}
	bit, err := s.sorted(back, fmt.Sprintf("suffix values of order %d", k))
	if err != nil {
		return nil, err
	}
	return &joined{it: bit}, nil
}

// order estimates order k >= 2 as estimator.order does, context by
// context, and hands order k-1's entries to the sink.
func (s *streamer) order(k int) error {
	rep := OrderReport{Order: k, NGrams: int(s.sp.Entries[k-1])}
	kn := s.opt.Method == KneserNey && k < s.N
	var adj *colReader
	openAdj := func() error {
		var err error
		adj, err = openCol(s.adjName(k))
		return err
	}
	// The count of counts, counted by link or in one pass.
	n := make([]float64, s.opt.countOfCountsMax()+1)
	if k < len(s.coc) && s.coc[k] != nil {
		n = s.coc[k]
	} else if len(n) > 1 {
		if kn {
			if err := openAdj(); err != nil {
				return err
			}
			for i := uint64(0); i < s.sp.Entries[k-1]; i++ {
				r, err := adj.get64()
				if err != nil {
					adj.close()
					return err
				}
				if r >= 1 && r < uint64(len(n)) {
					n[r]++
				}
			}
			adj.close()
		} else {
			err := s.each(k, func(_ []uint32, r uint64) error {
				if r >= 1 && r < uint64(len(n)) {
					n[r]++
				}
				return nil
			})
			if err != nil {
				return err
			}
		}
	}
	disc := s.opt.discounter(k, n, &rep)
	var fallbacks tally
	var (
		jn        *joined
		sufs      *gather   // linked: the suffixes' probabilities
		lowerProb []float64 // linked: order k-1's probabilities
	)
	if k >= 3 && s.linked {
		var err error
		if lowerProb, err = s.readProbs(k - 1); err != nil {
			return err
		}
		col, err := openCol(s.sufName(k))
		if err != nil {
			return err
		}
		defer col.close()
		sufs = &gather{col: col, from: lowerProb, left: s.sp.Entries[k-1]}
	} else if k >= 3 {
		var err error
		if jn, err = s.join(k); err != nil {
			return err
		}
		defer jn.it.Close()
	}
	if kn {
		if err := openAdj(); err != nil {
			return err
		}
		defer adj.close()
	}
	walk, err := s.newLowerWalk(k-1, lowerProb)
	if err != nil {
		return err
	}
	defer walk.close()
	// The top order's entries go to so.Top as they are estimated, each
	// with its rank (k >= 3): the column link wrote, or the join's.
	var (
		top      *asyncSink
		topRanks *colReader
		topIDs   = make([]uint32, k)
	)
	if k == s.N && s.so.Top != nil {
		top = newAsyncSink(s.so.Top)
		defer top.close()
		if k >= 3 && s.linked {
			if topRanks, err = openCol(s.rankName(k)); err != nil {
				return err
			}
			defer topRanks.close()
		}
	}
	var probs *colWriter
	if top == nil {
		if probs, err = s.createCol(fmt.Sprintf("prob-%d", k)); err != nil {
			return err
		}
		defer probs.f.Close()
	}
	var ranks *colWriter
	if k >= 3 && !s.linked {
		if ranks, err = s.createCol(fmt.Sprintf("rank-%d", k)); err != nil {
			return err
		}
		defer ranks.f.Close()
	}
	// One context's successors.
	var (
		prefix  = make([]uint32, k-1)
		cnt     []uint64
		lower   []float64
		p       []float64
		badProb error
		// last words of the context's successors (for messages and the
		// top order's entries)
		lastWords []uint32
		// the successors' ranks (k >= 3; the model's keys)
		keys []uint32
	)
	flush := func() error {
		if len(cnt) == 0 {
			return nil
		}
		on, err := walk.seek(prefix)
		if err != nil {
			return err
		}
		if !on {
			return fmt.Errorf("counts are not closed: %d-gram %q lacks its prefix", k, s.words(prefix))
		}
		p = slices.Grow(p[:0], len(cnt))[:len(cnt)]
		total, err := s.exactTotal(k, cnt, prefix)
		if err != nil {
			return err
		}
		bow := disc(cnt, total, lower, p, &fallbacks)
		for j, v := range p {
			if badProb == nil && bad(v) {
				g := append(slices.Clone(prefix), lastWords[j])
				badProb = fmt.Errorf("order %d n-gram %q gets probability %v; no model is written", k, s.words(g), v)
			}
			if top != nil {
				if badProb != nil {
					continue // no model is written
				}
				copy(topIDs, prefix)
				topIDs[k-1] = lastWords[j]
				var rank uint32
				if k >= 3 {
					rank = keys[j]
				}
				if err := top.add(topIDs, rank, v, 0, 0, false, true); err != nil {
					return err
				}
				continue
			}
			if err := probs.put64(math.Float64bits(v)); err != nil {
				return err
			}
		}
		rep.Contexts++
		if err := walk.emit(bow, uint64(len(cnt)), false); err != nil {
			return err
		}
		cnt, lower, lastWords, keys = cnt[:0], lower[:0], lastWords[:0], keys[:0]
		return nil
	}
	err = s.each(k, func(g []uint32, raw uint64) error {
		if len(cnt) > 0 && tables.Compare(prefix, g[:k-1]) != 0 {
			if err := flush(); err != nil {
				return err
			}
		}
		copy(prefix, g[:k-1])
		c := raw
		if kn {
			var err error
			if c, err = adj.get64(); err != nil {
				return err
			}
		}
		cnt = append(cnt, c)
		lastWords = append(lastWords, g[k-1])
		var l float64
		if k == 2 {
			if s.sp.Unigrams[g[1]] == 0 && g[1] != s.start {
				return fmt.Errorf("counts are not closed: %d-gram %q lacks its suffix", k, s.words(g))
			}
			l = s.prob1[g[1]]
		} else if s.linked {
			var err error
			if l, err = sufs.next(); err != nil {
				return err
			}
			if topRanks != nil {
				rank, err := topRanks.get32()
				if err != nil {
					return err
				}
				keys = append(keys, rank)
			}
		} else {
			var rank uint32
			var err error
			if l, rank, err = jn.next(); err != nil {
				return err
			}
			if err := ranks.put32(rank); err != nil {
				return err
			}
			keys = append(keys, rank)
		}
		lower = append(lower, l)
		return nil
	})
	if err != nil {
		return err
	}
	if err := flush(); err != nil {
		return err
	}
	if err := walk.finish(); err != nil {
		return err
	}
	if probs != nil {
		if err := probs.close(); err != nil {
			return err
		}
	}
	if ranks != nil {
		if err := ranks.close(); err != nil {
			return err
		}
	}
	s.opt.noteFallbacks(k, n, &fallbacks, &rep)
	s.report.Orders = append(s.report.Orders, rep)
	if badProb != nil {
		return s.wrap(badProb)
	}
	if walk.badBow != nil {
		return walk.badBow
	}
	if top != nil {
		return top.close()
	}
	return nil
}

// readProbs reads order k's probabilities (column prob-k).
func (s *streamer) readProbs(k int) ([]float64, error) {
	c, err := openCol(s.probName(k))
	if err != nil {
		return nil, err
	}
	defer c.close()
	p := make([]float64, s.sp.Entries[k-1])
	for i := range p {
		bits, err := c.get64()
		if err != nil {
			return nil, err
		}
		p[i] = math.Float64frombits(bits)
	}
	return p, nil
}

// emitTop hands the entries of the highest order to the sink.
func (s *streamer) emitTop() error {
	walk, err := s.newLowerWalk(s.N, nil)
	if err != nil {
		return err
	}
	defer walk.close()
	for walk.i < walk.n {
		if err := walk.emit(0, 0, true); err != nil {
			return err
		}
	}
	return nil
}
