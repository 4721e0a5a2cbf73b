package prune

import (
	"fmt"
	"math"
	"slices"

	"ingot/compile/tables"
)

// Fit finds, by bisection on the threshold, the least relative-entropy
// pruning of t whose size is at most budget. size measures the model that
// threshold and keep give (typically the final file's size, so it should
// build that file's tables the way the caller will: see Select). The candidate thresholds are the distinct scores
// themselves, so the search is exact: it returns the smallest threshold that
// fits and the kept n-grams. It fails when even removing every prunable
// n-gram does not fit.
func Fit(t *tables.Tables, s Scores, budget int64, size func(threshold float64, keep [][]bool) (int64, error)) (threshold float64, keep [][]bool, bytes int64, err error) {
	var all []float64
	for k := 2; k <= t.Order(); k++ {
		all = append(all, s[k-1]...)
	}
	slices.Sort(all)
	all = slices.Compact(all)
	// Candidate i removes every score below cand[i]; the last removes all.
	cand := append(all, math.Inf(1))
	measure := func(th float64) ([][]bool, int64, error) {
		kp := Keep(t, s, th)
		n, err := size(th, kp)
		return kp, n, err
	}
	lo, hi := 0, len(cand)-1
	kp, n, err := measure(cand[hi])
	if err != nil {
		return 0, nil, 0, err
	}
	if n > budget {
		return 0, nil, 0, fmt.Errorf("no pruning fits %d bytes: the smallest model (unigrams and the contexts they need) takes %d", budget, n)
	}
	best, bestKeep, bestSize := cand[hi], kp, n
	for lo < hi {
		mid := int(uint(lo+hi) >> 1)
		kp, n, err := measure(cand[mid])
		if err != nil {
			return 0, nil, 0, err
		}
		if n <= budget {
			hi = mid
			best, bestKeep, bestSize = cand[mid], kp, n
		} else {
			lo = mid + 1
		}
	}
	return best, bestKeep, bestSize, nil
}
