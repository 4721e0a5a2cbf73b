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
	var smallest int64 = -1
	threshold, keep, err = Least(t, s, func(th float64, kp [][]bool) (bool, error) {
		n, err := size(th, kp)
		if smallest < 0 {
			smallest = n // the first call measures the smallest model
		}
		bytes = n
		return n <= budget, err
	})
	if err != nil {
		return 0, nil, 0, err
	}
	if keep == nil {
		return 0, nil, 0, fmt.Errorf("no pruning fits %d bytes: the smallest model (unigrams and the contexts they need) takes %d", budget, smallest)
	}
	bytes, err = size(threshold, keep)
	return threshold, keep, bytes, err
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
