package verify

import (
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"sync"

	"ingot/compile/tables"
	"ingot/format"
)

// exp10 returns 10^x; math.Exp of x ln 10 is several times faster than
// math.Pow and its relative error (about 1e-15 for log10 values of stored
// probabilities) is far below any tolerance.
func exp10(x float64) float64 { return math.Exp(x * math.Ln10) }

// walker holds what the normalisation pass shares between its workers.
// During the pass over order k the workers only read the lower orders and
// write their own contexts' slots, so they need no lock.
type walker struct {
	v         *verifier
	m         *format.Model
	order     int
	start     uint32 // <s>, never predicted
	tolerance float64
	// nodes[k-1], for orders k < N, holds per entry its S as a context and
	// where its children start, with one more element closing the last
	// range. Keeping the two side by side, in 8 bytes, costs memory but
	// saves cache misses: looking up h' reads them together, at places that
	// jump around the file.
	nodes [tables.MaxOrder][]node
	// lower[k-1], orders 2..N-1: the stored log10 probabilities of order
	// k, read in place of P(x|h') when h'x is stored (its entry is the
	// suffix link of hx, format.Model.SuffixLink).
	lower [tables.MaxOrder][]float32
	// link[k-1][i] and linkOrder[k-1][i], for orders 2..N-1, locate the
	// longest stored suffix of h' (h without its oldest word): the context
	// whose S stands for S(h'). For order 1 it is the empty context.
	link      [tables.MaxOrder][]uint32
	linkOrder [tables.MaxOrder][]uint8
	empty     float64 // S of the empty context
}

// node is one context's sum and the start of its children. The sum is
// kept as its deviation S - 1 in float32, which holds it to within 6e-8 of
// the deviation (a few 1e-15 for a sum near one), the precision that
// matters, in half the space of a float64.
type node struct {
	deviation float32
	first     uint32
}

// tally is what one worker found: the counts of the normalisation check
// and its worst contexts.
type tally struct {
	contexts  int
	histogram [Buckets]int
	max       float64
	exceeding int
	worst     []ranked // at most 10, largest deviation first
	fallbacks int      // predictions asked of the query path: h'w not stored
}

// ranked is a context's place and sum, for the worst list.
type ranked struct {
	k, i int // order and entry; k = 0 for the empty context
	sum  float64
	dev  float64
}

// note counts one context's sum.
func (t *tally) note(k, i int, sum, tolerance float64) {
	d := deviation(sum)
	t.contexts++
	t.histogram[bucket(d)]++
	t.max = max(t.max, d)
	if !(d <= tolerance) {
		t.exceeding++
	}
	if len(t.worst) == 10 && !(d > t.worst[9].dev) {
		return
	}
	t.worst = insertRanked(t.worst, ranked{k, i, sum, d})
}

// insertRanked puts r into a worst list after every entry at least as bad,
// keeping ten.
func insertRanked(worst []ranked, r ranked) []ranked {
	at := sort.Search(len(worst), func(j int) bool { return worst[j].dev < r.dev })
	worst = slices.Insert(worst, at, r)
	return worst[:min(len(worst), 10)]
}

// merge adds a later tally (of contexts that come after t's) into t.
func (t *tally) merge(o *tally) {
	t.contexts += o.contexts
	for b := range t.histogram {
		t.histogram[b] += o.histogram[b]
	}
	t.max = max(t.max, o.max)
	t.exceeding += o.exceeding
	for _, r := range o.worst {
		if len(t.worst) == 10 && !(r.dev > t.worst[9].dev) {
			break
		}
		t.worst = insertRanked(t.worst, r)
	}
	t.fallbacks += o.fallbacks
}

// worker computes the sums of a run of contexts of one order.
type worker struct {
	*walker
	tally
	path [tables.MaxOrder + 1]uint32 // a context and a successor, for the slow path
	gram []uint32                    // scratch for Model.Gram
}

// walk runs the normalisation check. It reads the trie through the
// model's walks (ChildRange, WordAt, SuffixLink, Find, Gram) and its values
// through LogProbAt and LogBackoffAt.
func (v *verifier) walk() {
	m := v.m
	N := m.Order()
	tol := v.opt.Tolerance
	if tol == 0 {
		tol = DefaultTolerance(m)
	}
	w := &walker{v: v, m: m, order: N, start: m.StartID(), tolerance: tol}
	for k := 1; k < N; k++ {
		n := m.Count(k)
		nodes := make([]node, n+1)
		for i := range n {
			a, _ := m.ChildRange(k, i)
			nodes[i].first = uint32(a)
		}
		nodes[n].first = uint32(m.Count(k + 1))
		w.nodes[k-1] = nodes
		if k >= 2 {
			lower := make([]float32, n)
			for i := range lower {
				lower[i] = m.LogProbAt(k, i)
			}
			w.lower[k-1] = lower
		}
		if k+1 < N {
			w.link[k] = make([]uint32, m.Count(k+1))
			w.linkOrder[k] = make([]uint8, m.Count(k+1))
		}
	}

	all := &tally{}
	// The empty context: every unigram but <s>, through the query path.
	for x := 0; x < m.VocabSize(); x++ {
		if uint32(x) != w.start {
			var s format.State
			w.empty += exp10(m.Next(&s, uint32(x)))
		}
	}
	all.note(0, 0, w.empty, tol)
	for k := 1; k < N; k++ {
		w.level(k, all)
	}
	w.finish(all)
}

// minShare is the fewest contexts worth a worker of their own.
const minShare = 1 << 14

// level computes S for every context of order k. The contexts depend only
// on lower orders, so the order is split into runs, one per processor, and
// the runs' tallies are merged in order: the report does not depend on how
// many processors there are.
func (w *walker) level(k int, all *tally) {
	n := w.m.Count(k)
	procs, share := runtime.GOMAXPROCS(0), minShare
	if w.v.split > 0 { // tests: split small models too
		procs, share = w.v.split, 1
	}
	parts := max(1, min(procs, n/share))
	workers := make([]*worker, parts)
	var wg sync.WaitGroup
	faults := make([]error, parts)
	for p := range workers {
		wk := &worker{walker: w}
		workers[p] = wk
		lo, hi := p*n/parts, (p+1)*n/parts
		wg.Go(func() {
			// A mapped file that shrinks under the walk faults here, in a
			// goroutine of its own: carry the fault to the caller's Guard.
			faults[p] = format.Guard(func() error {
				for i := lo; i < hi; i++ {
					wk.context(k, i)
				}
				return nil
			})
		})
	}
	wg.Wait()
	for _, err := range faults {
		if err != nil {
			panic(err)
		}
	}
	for _, wk := range workers {
		all.merge(&wk.tally)
	}
}

// prob returns the stored log10 probability of entry i of order k.
func (w *walker) prob(k, i int) float64 { return float64(w.m.LogProbAt(k, i)) }

// backoff returns the stored log10 back-off weight of entry i of order k.
func (w *walker) backoff(k, i int) float64 { return float64(w.m.LogBackoffAt(k, i)) }

// context computes S(h) for entry i of order k as a context h, once S is
// known for every context of lower order, and locates the longest stored
// suffix of h'x for each successor x of h (the link of hx, used when hx is
// the context).
//
// For each successor x it needs P(x|h'). When h'x is stored, that is its
// stored probability: the back-off rule looks no further, so this is the
// answer format.Model.Next gives. h'x is the suffix of hx, whose entry the
// model's suffix link names (found once per model, and shared with the
// format's suffix rule). When h'x is not stored (h' itself may not be),
// P(x|h') is asked of the model's query path, Next, from the query state of
// h'.
func (wk *worker) context(k, i int) {
	w := wk.walker
	lo, li := 0, uint32(0) // the longest stored suffix of h'
	if k >= 2 {
		lo, li = int(w.linkOrder[k-1][i]), w.link[k-1][i]
	}
	a, b := w.children(k, i)
	next := k + 1
	lower := w.lower[k-1]
	below := w.empty
	if lo >= 1 {
		below = 1 + float64(w.nodes[lo-1][li].deviation)
	}
	var state format.State
	slow := false // path and state hold h and h'
	var stored, lowerSum float64
	for c := a; c < b; c++ {
		x := w.m.WordAt(next, c)
		so, si, found := 1, x, k == 1 // for k = 1, h'x is the unigram x
		var lp float64
		if k >= 2 {
			if s, ok := w.m.SuffixLink(next, c); ok && s < len(lower) {
				so, si, found = k, uint32(s), true
				lp = float64(lower[s])
			}
		}
		if k == 1 {
			lp = w.prob(1, int(x))
		}
		if !found {
			if !slow {
				copy(wk.path[:k], w.m.Gram(k, i, wk.gram[:0]))
				state, slow = w.m.ContextState(wk.path[1:k]), true
			}
			s := state
			lp = w.m.Next(&s, x)
			wk.fallbacks++
			wk.path[k] = x
			so, si = wk.shorterSuffix(k, lo, x)
		}
		if x != w.start {
			stored += exp10(w.prob(next, c))
			lowerSum += exp10(lp)
		}
		if next < w.order {
			w.link[next-1][c], w.linkOrder[next-1][c] = si, uint8(so)
		}
	}
	s := stored + exp10(w.backoff(k, i))*(below-lowerSum)
	w.nodes[k-1][i].deviation = float32(s - 1)
	wk.note(k, i, s, w.tolerance)
}

// children returns the range of entry i of order k's children, from the
// node table.
func (w *walker) children(k, i int) (int, int) {
	nodes := w.nodes[k-1]
	if i < 0 || i+1 >= len(nodes) {
		return 0, 0
	}
	a, b := int(nodes[i].first), int(nodes[i+1].first)
	b = min(b, w.m.Count(k+1))
	return min(a, b), b
}

// shorterSuffix returns the order and index of the longest stored suffix of
// h'x when h'x itself is not stored; h is the current entry of order k
// (its words in path[:k], and x in path[k]) and lo the order of the
// longest stored suffix of h'. That suffix is u x for the longest stored
// suffix u of h' with u x stored (prefix closure: u x stored needs u
// stored), so it is at most lo+1 words long, and at worst the unigram x.
func (wk *worker) shorterSuffix(k, lo int, x uint32) (int, uint32) {
	for L := min(lo+1, k-1); L >= 2; L-- {
		if c, ok := wk.m.Find(wk.path[k+1-L : k+1]); ok {
			return L, uint32(c)
		}
	}
	return 1, x
}

// finish records the normalisation check.
func (w *walker) finish(all *tally) {
	tol := w.tolerance
	norm := &Normalisation{
		Tolerance:    tol,
		Contexts:     all.contexts,
		MaxDeviation: all.max,
		Histogram:    all.histogram,
		Exceeding:    all.exceeding,
	}
	c := Check{Name: CheckNormalisation, Status: Pass}
	for _, r := range all.worst {
		norm.Worst = append(norm.Worst, ContextSum{Context: w.contextWords(r.k, r.i), Sum: r.sum})
		if r.dev <= tol {
			continue
		}
		section, at := w.whereSum(r.k, r.i)
		c.problem(section, at, "context %q sums to %.9g (|S-1| = %.3g, tolerance %g)", w.v.words(w.contextIDs(r.k, r.i)), r.sum, r.dev, tol)
	}
	// Count every context over the tolerance, not only the listed ones.
	c.Count = norm.Exceeding
	if norm.Exceeding > 0 {
		c.Status = Fail
		c.Detail = fmt.Sprintf("%d of %d contexts deviate from one by more than %g; the largest |S-1| is %.3g", norm.Exceeding, norm.Contexts, tol, norm.MaxDeviation)
	} else {
		c.Detail = fmt.Sprintf("%d contexts sum to one within %.3g; the largest |S-1| is %.3g", norm.Contexts, tol, norm.MaxDeviation)
	}
	w.v.rep.Normalisation = norm
	w.v.add(c)
}

// contextIDs returns the words of context (k, i); nil for the empty one.
func (w *walker) contextIDs(k, i int) []uint32 {
	if k == 0 {
		return nil
	}
	return w.m.Gram(k, i, nil)
}

func (w *walker) contextWords(k, i int) []string {
	g := w.contextIDs(k, i)
	out := make([]string, len(g))
	for j, id := range g {
		out[j] = w.m.Word(id)
	}
	return out
}

// whereSum names the stored value that most directly sets a context's sum:
// its back-off weight, or, for the empty context, the unigram
// probabilities.
func (w *walker) whereSum(k, i int) (string, int64) {
	if k == 0 {
		name, at := w.m.ValueOffset(1, 0, false)
		return name + " (the empty context)", at
	}
	return w.m.ValueOffset(k, i, true)
}
