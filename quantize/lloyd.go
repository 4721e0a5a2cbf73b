package quantize

import (
	"fmt"
	"slices"
	"sort"
)

// Lloyd refines a codebook by at most iterations rounds of the method of
// S. P. Lloyd (1982), "Least squares quantization in PCM", IEEE Transactions
// on Information Theory 28(2): each value goes to its nearest level (ties to
// the lower, as in Index), then each level moves to the mean of its values;
// a level without values stays where it is. No round increases the mean
// squared error, and the rounds stop early once no level moves. The result
// is a local optimum at best; it is used here to check the optimal trainer
// and may refine a codebook from elsewhere.
//
// The values are sorted once, O(n log n); a round costs O(n + L log n) for
// L levels. The values must be finite and fit in a float32, and init must
// pass Validate. Levels are kept in float64 between rounds and rounded to
// float32 at the end; levels that then coincide are merged.
func Lloyd(values []float64, init Codebook, iterations int) (Codebook, error) {
	if err := init.Validate(); err != nil {
		return Codebook{}, fmt.Errorf("quantize: Lloyd needs a valid initial codebook: %w", err)
	}
	if iterations < 0 {
		return Codebook{}, fmt.Errorf("quantize: Lloyd needs a non-negative number of iterations, not %d", iterations)
	}
	if len(values) == 0 {
		return Codebook{}, fmt.Errorf("quantize: no values for Lloyd iterations")
	}
	if err := checkValues(values); err != nil {
		return Codebook{}, err
	}
	sorted := slices.Clone(values)
	slices.Sort(sorted)
	levels := make([]float64, init.Len())
	for i, v := range init.Values {
		levels[i] = float64(v)
	}
	for range iterations {
		moved := false
		lo := 0
		for i := range levels {
			hi := len(sorted)
			if i+1 < len(levels) {
				midpoint := (levels[i] + levels[i+1]) / 2
				// A value on the midpoint goes to the lower level.
				hi = sort.Search(len(sorted), func(j int) bool { return sorted[j] > midpoint })
			}
			if hi > lo {
				if m := mean(sorted[lo:hi]); m != levels[i] {
					levels[i], moved = m, true
				}
			}
			lo = hi
		}
		if !moved {
			break
		}
	}
	return codebookFrom(levels), nil
}
