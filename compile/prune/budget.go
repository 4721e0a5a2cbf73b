package prune

import (
	"fmt"
	"math"
	"slices"

	"ingot/compile/tables"
)

// Least finds, by bisection on the threshold, the least relative-entropy
// pruning of t that satisfies ok. The candidate thresholds are the distinct
// scores themselves (and +Inf, which removes everything removable), so the
// search is exact: it returns the smallest threshold whose kept n-grams
// satisfy ok, assuming that removing more never turns ok false. It fails
// when even removing every prunable n-gram does not satisfy ok.
func Least(t *tables.Tables, s Scores, ok func(threshold float64, keep [][]bool) (bool, error)) (float64, [][]bool, error) {
	var all []float64
	for k := 2; k <= t.Order(); k++ {
		all = append(all, s[k-1]...)
	}
	slices.Sort(all)
	cand := append(slices.Compact(all), math.Inf(1))
	lo, hi := 0, len(cand)-1
	keep := Keep(t, s, cand[hi])
	if good, err := ok(cand[hi], keep); err != nil || !good {
		return 0, nil, err
	}
	best, bestKeep := cand[hi], keep
	for lo < hi {
		mid := int(uint(lo+hi) >> 1)
		kp := Keep(t, s, cand[mid])
		good, err := ok(cand[mid], kp)
		if err != nil {
			return 0, nil, err
		}
		if good {
			hi = mid
			best, bestKeep = cand[mid], kp
		} else {
			lo = mid + 1
		}
	}
	return best, bestKeep, nil
}

// Fit finds the least pruning of t whose size is at most budget. size
// measures the model that threshold and keep give (typically the final
// file's size, so it should build that file's tables the way the caller
// will: see Select). It fails when even the smallest model does not fit.
func Fit(t *tables.Tables, s Scores, budget int64, size func(threshold float64, keep [][]bool) (int64, error)) (threshold float64, keep [][]bool, bytes int64, err error) {
	return NewSearch(t, s, size).Fit(budget)
}

// A Search finds least prunings of one model under size budgets. It
// remembers every size it has measured, so that fitting the same model to
// several budgets (or to a lowered budget after a finished file came out
// larger than its sizing) measures few new sizes.
//
// The candidate thresholds are the distinct scores and +Inf, as in Least;
// the size of the model kept at candidate i falls as i grows (assumed, as
// Least assumes ok monotone), and is close to linear in i, since each
// candidate removes about one n-gram more. Between a candidate known not to
// fit and one known to fit, the next one measured is where the straight
// line through their sizes crosses the budget, or the midpoint when that
// has not halved the interval within two steps (a safeguarded regula falsi);
// the answer is the exact least candidate that fits, whatever the order of
// the measurements.
type Search struct {
	t     *tables.Tables
	s     Scores
	cand  []float64
	size  func(threshold float64, keep [][]bool) (int64, error)
	known map[int]int64
	// Measured counts the sizes measured (each one builds a candidate
	// model), for benchmarks and tests.
	Measured int
}

// NewSearch prepares the candidate thresholds of t's scores.
func NewSearch(t *tables.Tables, s Scores, size func(threshold float64, keep [][]bool) (int64, error)) *Search {
	var all []float64
	for k := 2; k <= t.Order(); k++ {
		all = append(all, s[k-1]...)
	}
	slices.Sort(all)
	cand := append(slices.Compact(all), math.Inf(1))
	return &Search{t: t, s: s, cand: cand, size: size, known: map[int]int64{}}
}

func (x *Search) measure(i int) (int64, [][]bool, error) {
	kp := Keep(x.t, x.s, x.cand[i])
	if n, ok := x.known[i]; ok {
		return n, kp, nil
	}
	n, err := x.size(x.cand[i], kp)
	if err != nil {
		return 0, nil, err
	}
	x.Measured++
	x.known[i] = n
	return n, kp, nil
}

// Fit finds the least pruning whose size is at most budget, as the
// function Fit does.
func (x *Search) Fit(budget int64) (threshold float64, keep [][]bool, bytes int64, err error) {
	last := len(x.cand) - 1
	smallest, _, err := x.measure(last)
	if err != nil {
		return 0, nil, 0, err
	}
	if smallest > budget {
		return 0, nil, 0, fmt.Errorf("no pruning fits %d bytes: the smallest model (unigrams and the contexts they need) takes %d", budget, smallest)
	}
	// lo does not fit (or is -1, before every candidate), hi fits; start
	// from the tightest pair already measured.
	lo, hi := -1, last
	for i, n := range x.known {
		if n <= budget && i < hi {
			hi = i
		}
		if n > budget && i > lo {
			lo = i
		}
	}
	if lo < 0 && hi > 0 {
		n, _, err := x.measure(0)
		if err != nil {
			return 0, nil, 0, err
		}
		if n <= budget {
			hi = 0
		} else {
			lo = 0
		}
	}
	width, stale := hi-lo, 0
	for hi-lo > 1 {
		mid := lo + (hi-lo)/2
		if stale < 2 {
			fl, fh := float64(x.known[lo]), float64(x.known[hi])
			if fl > fh {
				g := float64(lo) + float64(hi-lo)*(fl-float64(budget))/(fl-fh)
				mid = min(max(int(math.Round(g)), lo+1), hi-1)
			}
		}
		n, _, err := x.measure(mid)
		if err != nil {
			return 0, nil, 0, err
		}
		if n <= budget {
			hi = mid
		} else {
			lo = mid
		}
		if 2*(hi-lo) <= width {
			width, stale = hi-lo, 0
		} else {
			stale++
			if stale > 2 {
				stale = 0 // the midpoint halved it
				width = hi - lo
			}
		}
	}
	n, kp, err := x.measure(hi)
	return x.cand[hi], kp, n, err
}

// KeepAtMost finds the least pruning of t that keeps at most the given
// number of n-grams (all orders, unigrams included).
func KeepAtMost(t *tables.Tables, s Scores, ngrams int) (float64, [][]bool, error) {
	th, keep, err := Least(t, s, func(_ float64, kp [][]bool) (bool, error) {
		n := 0
		for _, c := range Kept(kp) {
			n += c
		}
		return n <= ngrams, nil
	})
	if err == nil && keep == nil {
		err = fmt.Errorf("no pruning keeps at most %d n-grams", ngrams)
	}
	return th, keep, err
}
