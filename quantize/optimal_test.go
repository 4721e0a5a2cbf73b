package quantize

import (
	"fmt"
	"math"
	"testing"
)

// max1960 holds the optimal quantizers of the standard normal distribution
// for minimum mean squared error from J. Max (1960), "Quantizing for minimum
// distortion", IRE Transactions on Information Theory IT-6, Table I: the
// positive output levels (the negative ones mirror them) and the mean
// squared error. The figures are recalled from memory, not copied from the
// paper. The two-level row can be derived: the levels are ±E|X| =
// ±sqrt(2/π) = ±0.79788 and the error is 1 - 2/π = 0.36338.
var max1960 = []struct {
	levels   int
	positive []float64
	mse      float64
}{
	{2, []float64{0.7979}, 0.3634},
	{4, []float64{0.4528, 1.510}, 0.1175},
	{8, []float64{0.2451, 0.7560, 1.344, 2.152}, 0.03454},
}

// symmetric returns the levels -p[n-1] .. -p[0], p[0] .. p[n-1].
func symmetric(positive []float64) []float64 {
	out := make([]float64, 0, 2*len(positive))
	for i := len(positive) - 1; i >= 0; i-- {
		out = append(out, -positive[i])
	}
	return append(out, positive...)
}

// normalQuantiles returns the n quantiles Φ⁻¹((i+½)/n) of the standard
// normal distribution, Φ⁻¹(p) = √2·erfinv(2p-1): a sample-free stand-in for
// the distribution with no sampling noise.
func normalQuantiles(n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = math.Sqrt2 * math.Erfinv(2*(float64(i)+0.5)/float64(n)-1)
	}
	return out
}

// TestOptimalApproachesMax1960 trains on 200,000 evenly spaced quantiles of
// the standard normal distribution, where the optimal codebook must be
// Max's (1960) up to the rounding of his table (4 significant figures) and
// the cut-off tails beyond ±4.4.
func TestOptimalApproachesMax1960(t *testing.T) {
	values := normalQuantiles(200_000)
	for _, row := range max1960 {
		t.Run(levelsName(row.levels), func(t *testing.T) {
			c, err := Train(values, row.levels, LeastSquares)
			if err != nil {
				t.Fatal(err)
			}
			checkLevels(t, c, symmetric(row.positive), 1e-3)
			if got := MeanSquaredError(values, c); math.Abs(got/row.mse-1) > 0.002 {
				t.Errorf("mean squared error %.5f, Max (1960) %.5f", got, row.mse)
			}
		})
	}
}

// TestOptimalOnNormalSample trains on 200,000 seeded standard normal draws.
// A sample's optimal codebook scatters about Max's (1960): over seeds 1 to 6
// the levels of 2 and 4 levels moved by up to 0.013 and the outermost of 8
// levels by up to 0.036, while the error stayed within 1.1%. The tolerances
// cover that scatter; equal-population bins, the wrong answer closest at
// hand, miss the 4-level table by 0.13.
func TestOptimalOnNormalSample(t *testing.T) {
	values := normalSample(200_000, 1)
	for _, row := range max1960 {
		t.Run(levelsName(row.levels), func(t *testing.T) {
			c, err := Train(values, row.levels, LeastSquares)
			if err != nil {
				t.Fatal(err)
			}
			tolerance := 0.02
			if row.levels == 8 {
				tolerance = 0.05
			}
			checkLevels(t, c, symmetric(row.positive), tolerance)
			if got := MeanSquaredError(values, c); math.Abs(got/row.mse-1) > 0.02 {
				t.Errorf("mean squared error %.5f, Max (1960) %.5f", got, row.mse)
			}
		})
	}
}

// TestUniformStepSquaredOverTwelve checks the textbook fact that a uniform
// source quantized uniformly with step Δ has mean squared error Δ²/12, and
// that the optimal quantizer of a uniform source is the uniform one, with
// levels at the centres (i+½)/k of k equal cells of [0, 1).
func TestUniformStepSquaredOverTwelve(t *testing.T) {
	grid := make([]float64, 32_000)
	for i := range grid {
		grid[i] = (float64(i) + 0.5) / float64(len(grid))
	}
	tests := []struct {
		name           string
		values         []float64
		levels         int
		levelTolerance float64
	}{
		// Over seeds 1 to 6 a sample's levels moved by up to 0.012 (a fifth
		// of the step 1/16) and its error by up to 0.5%.
		{"seeded sample of 200000", uniformSample(200_000, 2), 16, 0.02},
		{"evenly spaced grid", grid, 16, 1e-6},
		{"evenly spaced grid, many levels", grid, 1000, 1e-6},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c, err := Train(tt.values, tt.levels, LeastSquares)
			if err != nil {
				t.Fatal(err)
			}
			want := make([]float64, tt.levels)
			for i := range want {
				want[i] = (float64(i) + 0.5) / float64(tt.levels)
			}
			checkLevels(t, c, want, tt.levelTolerance)
			step := 1 / float64(tt.levels)
			if got, law := MeanSquaredError(tt.values, c), step*step/12; math.Abs(got/law-1) > 0.02 {
				t.Errorf("mean squared error %.4g, step²/12 = %.4g", got, law)
			}
		})
	}
}

// checkLevels compares a codebook with expected levels.
func checkLevels(t *testing.T, c Codebook, want []float64, tolerance float64) {
	t.Helper()
	if c.Len() != len(want) {
		t.Fatalf("%d levels, want %d", c.Len(), len(want))
	}
	for i, w := range want {
		if got := float64(c.Values[i]); math.Abs(got-w) > tolerance {
			t.Errorf("level %d = %.5f, want %.5f ± %g", i, got, w, tolerance)
		}
	}
}

// bruteForceError returns the least total squared error of any partition of
// the sorted values into k groups of neighbours, by trying every partition.
// Every optimal codebook has such cells, since a nearest-level cell is an
// interval (law of the nearest-neighbour condition, Lloyd 1982).
func bruteForceError(sorted []float64, k int) float64 {
	if k == 1 {
		return squaredError(sorted)
	}
	best := math.Inf(1)
	for cut := 1; cut <= len(sorted)-k+1; cut++ {
		best = min(best, squaredError(sorted[:cut])+bruteForceError(sorted[cut:], k-1))
	}
	return best
}

// smallRandomInputs returns seeded random inputs of 2 to 12 values of
// several shapes, with repeats in some.
func smallRandomInputs(count int) [][]float64 {
	r := newRand(31)
	out := make([][]float64, count)
	for i := range out {
		values := make([]float64, 2+r.IntN(11))
		for j := range values {
			switch i % 3 {
			case 0:
				values[j] = r.NormFloat64()
			case 1:
				values[j] = float64(r.IntN(5)) // repeats
			default:
				values[j] = 3 * math.Log10(1-r.Float64())
			}
		}
		out[i] = values
	}
	return out
}

// TestOptimalMatchesBruteForce checks exactness against every partition on
// small inputs, through Train and through both exact methods directly.
func TestOptimalMatchesBruteForce(t *testing.T) {
	for trial, values := range smallRandomInputs(600) {
		sorted := sortedCopy(values)
		points, weights := distinct(sorted)
		for k := 2; k <= min(4, len(values)); k++ {
			want := bruteForceError(sorted, k)
			c, err := Train(values, k, LeastSquares)
			if err != nil {
				t.Fatal(err)
			}
			// The float32 levels cost at most a few float32 roundings.
			if got := MeanSquaredError(values, c) * float64(len(values)); got > want*(1+1e-6)+1e-12 {
				t.Errorf("trial %d, %d levels, values %v: Train error %.12g, brute force %.12g", trial, k, values, got, want)
			}
			if len(points) <= k {
				continue
			}
			costs := newGroupCosts(points, weights)
			for name, bounds := range map[string][]int{
				"layered": costs.layeredBoundaries(k),
				"priced":  costs.pricedBoundaries(k),
			} {
				if got := partitionError(points, weights, bounds); math.Abs(got-want) > 1e-9*(1+want) {
					t.Errorf("trial %d, %d levels, values %v: %s error %.12g, brute force %.12g", trial, k, values, name, got, want)
				}
			}
		}
	}
}

// partitionError returns the weighted squared error of a partition, summed
// directly.
func partitionError(points, weights []float64, bounds []int) float64 {
	means := groupMeans(points, weights, bounds)
	sum := 0.0
	for g, m := range means {
		for i := bounds[g]; i < bounds[g+1]; i++ {
			sum += weights[i] * (points[i] - m) * (points[i] - m)
		}
	}
	return sum
}

// TestPricedMatchesLayered compares the two exact methods on larger inputs,
// including evenly spaced points, whose many equal costs leave some numbers
// of groups optimal for no single price, so that the partitions must be
// spliced.
func TestPricedMatchesLayered(t *testing.T) {
	type input struct {
		name            string
		points, weights []float64
	}
	var inputs []input
	for _, m := range []int{17, 40, 101} {
		points, weights := make([]float64, m), make([]float64, m)
		for i := range points {
			points[i], weights[i] = float64(i), 1
		}
		inputs = append(inputs, input{fmt.Sprintf("%d evenly spaced", m), points, weights})
	}
	for seed, sample := range [][]float64{normalSample(3000, 32), logProbLikeSample(3000, 33)} {
		points, weights := distinct(sortedCopy(sample))
		inputs = append(inputs, input{fmt.Sprintf("sample %d", seed), points, weights})
	}
	spliced := 0
	for _, in := range inputs {
		costs := newGroupCosts(in.points, in.weights)
		groups := []int{2, 3, 7, 16, 17, 33, 64, 100}
		if len(in.points) <= 101 {
			groups = groups[:0]
			for k := 2; k < len(in.points); k++ {
				groups = append(groups, k)
			}
		}
		for _, k := range groups {
			layered := partitionError(in.points, in.weights, costs.layeredBoundaries(k))
			bounds, wasSpliced := costs.pricedSearch(k)
			if wasSpliced {
				spliced++
			}
			if len(bounds) != k+1 {
				t.Fatalf("%s, %d groups: priced partition has %d groups", in.name, k, len(bounds)-1)
			}
			if priced := partitionError(in.points, in.weights, bounds); math.Abs(priced-layered) > 1e-9*(1+layered) {
				t.Errorf("%s, %d groups: priced error %.12g, layered %.12g", in.name, k, priced, layered)
			}
		}
	}
	if spliced == 0 {
		t.Error("no case needed a splice; the test no longer covers it")
	}
}

func TestSplice(t *testing.T) {
	fewer := []int{0, 6, 12}
	more := []int{0, 2, 4, 6, 8, 10, 12}
	for k := 3; k <= 5; k++ {
		got := splice(fewer, more, k)
		if len(got) != k+1 || got[0] != 0 || got[k] != 12 {
			t.Fatalf("splice to %d groups = %v", k, got)
		}
		for i := 1; i < len(got); i++ {
			if got[i] <= got[i-1] {
				t.Fatalf("splice to %d groups = %v, not ascending", k, got)
			}
		}
	}
}

func TestOrderedKey(t *testing.T) {
	floats := []float64{math.Inf(-1), -1e300, -1, -1e-300, math.Copysign(0, -1), 0, 1e-300, 1, 1e300, math.Inf(1)}
	for i, f := range floats {
		if back := fromOrderedKey(orderedKey(f)); math.Float64bits(back) != math.Float64bits(f) {
			t.Errorf("fromOrderedKey(orderedKey(%g)) = %g", f, back)
		}
		if i > 0 && orderedKey(floats[i-1]) >= orderedKey(f) {
			t.Errorf("orderedKey(%g) >= orderedKey(%g)", floats[i-1], f)
		}
	}
}

// TestOptimalNeverWorseThanLloyd checks the optimal codebook against Lloyd
// (1982) iterations started from the binning codebook and from random
// levels, on seeded data of several shapes: a local optimum can match the
// global one but never beat it.
func TestOptimalNeverWorseThanLloyd(t *testing.T) {
	r := newRand(41)
	shapes := map[string][]float64{
		"normal":               normalSample(4000, 42),
		"uniform":              uniformSample(4000, 43),
		"log-probability-like": logProbLikeSample(4000, 44),
		"two clusters and an outlier": func() []float64 {
			v := normalSample(4000, 45)
			for i := range v {
				if i%2 == 0 {
					v[i] = 0.1*v[i] - 5
				}
			}
			v[0] = -99
			return v
		}(),
		"repeated values": func() []float64 {
			v := logProbLikeSample(4000, 46)
			for i := range v {
				v[i] = math.Round(v[i]*4) / 4
			}
			return v
		}(),
	}
	for name, values := range shapes {
		for _, k := range []int{3, 8, 40} {
			optimal, err := Train(values, k, LeastSquares)
			if err != nil {
				t.Fatal(err)
			}
			best := MeanSquaredError(values, optimal)
			starts := map[string]Codebook{}
			if starts["binning"], err = Train(values, k, EqualMass); err != nil {
				t.Fatal(err)
			}
			for s := range 4 {
				levels := make([]float64, k)
				for i := range levels {
					levels[i] = values[r.IntN(len(values))]
				}
				starts[fmt.Sprintf("random %d", s)] = codebookFrom(sortedCopy(levels))
			}
			for start, init := range starts {
				refined, err := Lloyd(values, init, 200)
				if err != nil {
					t.Fatal(err)
				}
				if lloyd := MeanSquaredError(values, refined); best > lloyd*(1+1e-9) {
					t.Errorf("%s, %d levels: optimal error %.9g worse than Lloyd from %s %.9g", name, k, best, start, lloyd)
				}
			}
		}
	}
}

// TestMicroBinnedOptimal trains on more distinct values than MicroBins with
// many levels, where the optimal trainer merges values first: the result is
// optimal only over the micro-bins, so Lloyd iterations may still improve it,
// but only slightly (assumed bound, 0.1%), and it must beat binning.
func TestMicroBinnedOptimal(t *testing.T) {
	values := logProbLikeSample(300_000, 51)
	const levels = 512
	c, err := Train(values, levels, LeastSquares)
	if err != nil {
		t.Fatal(err)
	}
	if c.Len() != levels {
		t.Fatalf("%d levels, want %d", c.Len(), levels)
	}
	optimal := MeanSquaredError(values, c)
	binned, err := Train(values, levels, EqualMass)
	if err != nil {
		t.Fatal(err)
	}
	if binning := MeanSquaredError(values, binned); optimal >= binning {
		t.Errorf("optimal error %.6g not below binning %.6g", optimal, binning)
	}
	refined, err := Lloyd(values, c, 20)
	if err != nil {
		t.Fatal(err)
	}
	if lloyd := MeanSquaredError(values, refined); lloyd < optimal*(1-1e-3) {
		t.Errorf("Lloyd improved the micro-binned optimum from %.6g to %.6g", optimal, lloyd)
	}
}

// TestMicroBins checks the merge against its definition: at most the given
// number of bins, ascending means, counts that add up to the values.
func TestMicroBins(t *testing.T) {
	sorted := sortedCopy(logProbLikeSample(50_000, 52))
	const bins = 1000
	points, weights := microBins(sorted, bins)
	if len(points) > bins || len(points) != len(weights) {
		t.Fatalf("%d points, %d weights for %d bins", len(points), len(weights), bins)
	}
	width := (sorted[len(sorted)-1] - sorted[0]) / bins
	total, start := 0.0, 0
	for i, p := range points {
		if i > 0 && p <= points[i-1] {
			t.Fatalf("point %d (%g) not above point %d (%g)", i, p, i-1, points[i-1])
		}
		group := sorted[start : start+int(weights[i])]
		if group[len(group)-1]-group[0] > width*(1+1e-9) {
			t.Fatalf("bin %d spans %g, wider than %g", i, group[len(group)-1]-group[0], width)
		}
		if math.Abs(p-mean(group)) > 1e-12 {
			t.Fatalf("point %d = %g, mean of its values %g", i, p, mean(group))
		}
		total += weights[i]
		start += int(weights[i])
	}
	if int(total) != len(sorted) {
		t.Fatalf("weights add up to %g, want %d", total, len(sorted))
	}
}
