package quantize

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// MinLevels is the smallest number of levels Train accepts.
const MinLevels = 2

// Trainer names a way of building a codebook; the command line selects one
// by this name.
type Trainer string

const (
	// EqualMass sorts the values, cuts them into as many bins as there are
	// levels, each holding the same number of values (bin sizes differ by at
	// most one), and uses the mean of each bin as its level. It costs
	// O(n log n) for n values. Adjacent bins that hold one and the same
	// repeated value produce one level, so heavily repeated values can give
	// fewer levels than asked for.
	EqualMass Trainer = "equal-mass"

	// LeastSquares minimises the total squared error exactly, by the dynamic
	// programme of H. Wang and M. Song (2011), "Ckmeans.1d.dp: Optimal
	// k-means clustering in one dimension by dynamic programming", The R
	// Journal 3(2).
	//
	// The n values are sorted (O(n log n)) and reduced to their m distinct
	// values with multiplicities, which is weighted k-means with the same
	// optimum. Prefix sums of weight, value and squared value give the cost
	// of any group of neighbouring distinct values in O(1). For k levels one
	// of two exact methods runs:
	//
	//   - Up to 16 levels, when (k-1)(m-k+1) <= 1<<24: the programme runs
	//     layer by layer, one layer per level. The best split point is
	//     monotone in the end point (the group cost satisfies the quadrangle
	//     inequality), so each layer is solved by divide and conquer in
	//     O(m log m): O(k m log m) time in all, and O(k m) memory for the
	//     split points (at most 64 MiB).
	//   - Otherwise the number of levels is priced instead of fixed
	//     (Lagrangian relaxation, A. Aggarwal, B. Schieber and T. Tokuyama
	//     (1994), "Finding a minimum-weight k-link path in graphs with the
	//     concave Monge property and applications", Discrete & Computational
	//     Geometry 12). For one price the best partition takes O(m log m)
	//     (D. S. Hirschberg and L. L. Larmore (1987), "The least weight
	//     subsequence problem", SIAM Journal on Computing 16(4)). The price
	//     is found by bisection over the bit pattern of the float64 price, at
	//     most 64 steps; when no price gives exactly k levels, the partitions
	//     on either side are spliced into one with exactly k. O(m log m) time
	//     per step, independent of k, and O(m) memory. Above about 16 levels
	//     this is the faster method by far.
	//
	// Micro-bins: when the second method runs and m > MicroBins, the sorted
	// values are first merged into MicroBins bins of equal width between
	// the smallest and the largest value, and each non-empty bin becomes one
	// point, weighted by its count, at the mean of its values. The codebook
	// is then optimal among codebooks whose cells never split a micro-bin,
	// not over all codebooks; its levels are still means of the values they
	// stand for. When no more than k bins are non-empty, their means are the
	// levels, so values spread over a wide range with empty stretches
	// (heavy tails) can leave levels unused.
	//
	// The result is exact up to floating-point rounding of the prefix sums,
	// which are taken about the mean of the values to keep them small.
	LeastSquares Trainer = "least-squares"
)

// MicroBins is the number of equal-width bins into which the optimal trainer
// merges values when there are more distinct values than that and more than
// a few levels; see LeastSquares.
const MicroBins = 1 << 18

const (
	// layersMaxLevels is the most levels for which the optimal trainer
	// runs its programme layer by layer.
	layersMaxLevels = 16
	// layerTableLimit bounds (k-1)(m-k+1), the number of split points the
	// layer-by-layer programme stores.
	layerTableLimit = 1 << 24
)

// Trainers returns the known trainers in the order a help text lists them.
func Trainers() []Trainer { return []Trainer{EqualMass, LeastSquares} }

// renamedTrainers maps the names trainers had before version 0.2 to their
// names now, so that an old spelling is refused with a pointer to the new.
var renamedTrainers = map[string]Trainer{"optimal": LeastSquares, "binning": EqualMass}

// ParseTrainer returns the trainer with the given name, or an error that
// lists the known names (or, for a name from before version 0.2, gives the
// new one).
func ParseTrainer(name string) (Trainer, error) {
	t := Trainer(name)
	if nt, ok := renamedTrainers[name]; ok {
		return "", fmt.Errorf("trainer %q is now called %q", name, nt)
	}
	if !slices.Contains(Trainers(), t) {
		names := make([]string, 0, 2)
		for _, k := range Trainers() {
			names = append(names, string(k))
		}
		return "", fmt.Errorf("unknown trainer %q (known: %s)", name, strings.Join(names, ", "))
	}
	return t, nil
}

// Train builds a codebook of at most levels levels (MinLevels to MaxLevels)
// for the values with trainer t. The values may repeat and may come in any
// order; they are not modified. Every value must be finite and within the
// float32 range; otherwise the error names the index of the first bad value.
//
// When there are no more distinct values than levels, the codebook is
// exactly the distinct values. Otherwise it has levels levels, less any that
// become equal when rounded to float32 (and, for EqualMass, see there). The
// trainers compute in float64 and round the levels to float32 at the end.
func Train(values []float64, levels int, t Trainer) (Codebook, error) {
	if err := checkTraining(values, levels, t); err != nil {
		return Codebook{}, err
	}
	sorted := slices.Clone(values)
	slices.Sort(sorted)
	points, weights := distinct(sorted)
	if len(points) <= levels {
		return codebookFrom(points), nil
	}
	switch t {
	case EqualMass:
		return codebookFrom(binningLevels(sorted, levels)), nil
	default:
		return codebookFrom(optimalLevels(sorted, points, weights, levels)), nil
	}
}

// checkTraining checks the arguments common to Train and TrainWeighted.
func checkTraining(values []float64, levels int, t Trainer) error {
	if _, err := ParseTrainer(string(t)); err != nil {
		return err
	}
	if levels < MinLevels || levels > MaxLevels {
		return fmt.Errorf("quantize: %d levels asked for; levels must be from %d to %d", levels, MinLevels, MaxLevels)
	}
	if len(values) == 0 {
		return fmt.Errorf("quantize: no values to train a codebook on")
	}
	return checkValues(values)
}

// checkValues reports the first value that is not finite or does not fit in
// a float32.
func checkValues(values []float64) error {
	for i, v := range values {
		switch {
		case math.IsNaN(v) || math.IsInf(v, 0):
			return fmt.Errorf("quantize: value at index %d is %v", i, v)
		case math.IsInf(float64(float32(v)), 0):
			return fmt.Errorf("quantize: value at index %d (%g) is beyond the float32 range", i, v)
		}
	}
	return nil
}

// distinct returns the distinct values of a sorted slice and how often each
// occurs.
func distinct(sorted []float64) (points, weights []float64) {
	for i, v := range sorted {
		if i > 0 && v == sorted[i-1] {
			weights[len(weights)-1]++
			continue
		}
		points = append(points, v)
		weights = append(weights, 1)
	}
	return points, weights
}

// binningLevels returns the means of levels equal-population bins of the
// sorted values; it needs len(sorted) >= levels.
func binningLevels(sorted []float64, levels int) []float64 {
	n := len(sorted)
	out := make([]float64, levels)
	for b := range out {
		out[b] = mean(sorted[b*n/levels : (b+1)*n/levels])
	}
	return out
}

// mean returns the mean of a non-empty slice, summed as offsets from its
// first element so that a slice of equal values gives that value exactly.
func mean(xs []float64) float64 {
	sum := 0.0
	for _, x := range xs {
		sum += x - xs[0]
	}
	return xs[0] + sum/float64(len(xs))
}

// TrainWeighted is Train with a weight per value: the optimal trainer
// minimises the weighted squared error sum_i w_i (v_i - level(v_i))^2, and
// binning cuts bins of equal total weight. Weights must be finite and
// non-negative, with a positive sum.
func TrainWeighted(values, weights []float64, levels int, t Trainer) (Codebook, error) {
	if len(weights) != len(values) {
		return Codebook{}, fmt.Errorf("quantize: %d weights for %d values", len(weights), len(values))
	}
	if err := checkTraining(values, levels, t); err != nil {
		return Codebook{}, err
	}
	var total float64
	for i, w := range weights {
		if !(w >= 0) || math.IsInf(w, 0) {
			return Codebook{}, fmt.Errorf("quantize: weight at index %d is %v", i, w)
		}
		total += w
	}
	if !(total > 0) {
		return Codebook{}, fmt.Errorf("quantize: the weights sum to %v", total)
	}
	order := make([]int, len(values))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(a, b int) int {
		switch {
		case values[a] < values[b]:
			return -1
		case values[a] > values[b]:
			return 1
		}
		return 0
	})
	var points, pw []float64
	for _, i := range order {
		if n := len(points); n > 0 && points[n-1] == values[i] {
			pw[n-1] += weights[i]
			continue
		}
		points = append(points, values[i])
		pw = append(pw, weights[i])
	}
	if len(points) <= levels {
		return codebookFrom(points), nil
	}
	if t == EqualMass {
		return codebookFrom(weightedBinning(points, pw, total, levels)), nil
	}
	if !useLayers(len(points), levels) && len(points) > MicroBins {
		points, pw = weightedMicroBins(points, pw, MicroBins)
		if len(points) <= levels {
			return codebookFrom(points), nil
		}
	}
	// Points of zero weight cost nothing wherever they go; give them a tiny
	// weight so that every group has a defined mean.
	tiny := total * 1e-12 / float64(len(points))
	for i := range pw {
		pw[i] += tiny
	}
	return codebookFrom(groupMeans(points, pw, optimalBoundaries(points, pw, levels))), nil
}

// weightedBinning cuts the sorted distinct points into bins of (nearly)
// equal total weight and returns each bin's weighted mean.
func weightedBinning(points, weights []float64, total float64, levels int) []float64 {
	var out []float64
	var sum, wsum, acc float64
	bin := 1
	for i, p := range points {
		sum += p * weights[i]
		wsum += weights[i]
		acc += weights[i]
		if acc >= total*float64(bin)/float64(levels) || i == len(points)-1 {
			if wsum > 0 {
				out = append(out, sum/wsum)
			}
			sum, wsum = 0, 0
			bin++
		}
	}
	return out
}

// weightedMicroBins merges sorted distinct weighted points into at most bins
// equal-width bins, each represented by its weighted mean and total weight.
func weightedMicroBins(points, weights []float64, bins int) ([]float64, []float64) {
	lo, span := points[0], points[len(points)-1]-points[0]
	binOf := func(v float64) int { return min(int((v-lo)/span*float64(bins)), bins-1) }
	var outP, outW []float64
	start := 0
	for i := 1; i <= len(points); i++ {
		if i < len(points) && binOf(points[i]) == binOf(points[start]) {
			continue
		}
		var s, w float64
		for j := start; j < i; j++ {
			s += points[j] * weights[j]
			w += weights[j]
		}
		if w > 0 {
			outP = append(outP, s/w)
		} else {
			outP = append(outP, points[start])
		}
		outW = append(outW, w)
		start = i
	}
	return outP, outW
}
