package quantize

import (
	"math"
	"sort"
)

// This file holds the optimal trainer: weighted one-dimensional k-means
// solved exactly by dynamic programming (Wang and Song 2011). A partition of
// m sorted points into k groups of neighbours is written as its boundaries
// 0 = b[0] < b[1] < ... < b[k] = m; group g holds points b[g-1] .. b[g]-1.

// optimalLevels returns the levels of the optimal codebook with k levels for
// the sorted values, whose distinct values and their multiplicities are
// points and weights (more than k of them). See LeastSquares.
func optimalLevels(sorted, points, weights []float64, k int) []float64 {
	if !useLayers(len(points), k) && len(points) > MicroBins {
		points, weights = microBins(sorted, MicroBins)
		if len(points) <= k {
			return points
		}
	}
	return groupMeans(points, weights, optimalBoundaries(points, weights, k))
}

// optimalBoundaries returns the boundaries of a partition of the points into
// k groups with the least weighted squared error; it needs len(points) > k.
func optimalBoundaries(points, weights []float64, k int) []int {
	costs := newGroupCosts(points, weights)
	if useLayers(len(points), k) {
		return costs.layeredBoundaries(k)
	}
	return costs.pricedBoundaries(k)
}

// useLayers reports whether the layer-by-layer programme is used for m
// points and k groups: for few groups, where it is the faster of the two,
// and only when its table of split points stays small.
func useLayers(m, k int) bool {
	return k <= layersMaxLevels && (k-1)*(m-k+1) <= layerTableLimit
}

// microBins merges sorted values into at most bins equal-width bins between
// the first and the last value and returns, for each non-empty bin in order,
// the mean of its values and their count. Rounded division and
// multiplication are monotone, so each bin is a run of the sorted values.
func microBins(sorted []float64, bins int) (points, weights []float64) {
	lo, span := sorted[0], sorted[len(sorted)-1]-sorted[0]
	start := 0
	// The fraction (v-lo)/span stays in [0, 1] even for a span so small that
	// bins/span would overflow.
	binOf := func(v float64) int { return min(int((v-lo)/span*float64(bins)), bins-1) }
	for i := 1; i <= len(sorted); i++ {
		if i < len(sorted) && binOf(sorted[i]) == binOf(sorted[start]) {
			continue
		}
		points = append(points, mean(sorted[start:i]))
		weights = append(weights, float64(i-start))
		start = i
	}
	return points, weights
}

// groupMeans returns the weighted mean of each group of the partition,
// summed as offsets from the group's first point so that a group of one
// point gives that point exactly.
func groupMeans(points, weights []float64, bounds []int) []float64 {
	out := make([]float64, len(bounds)-1)
	for g := range out {
		first := points[bounds[g]]
		sum, weight := 0.0, 0.0
		for i := bounds[g]; i < bounds[g+1]; i++ {
			sum += float64(weights[i] * (points[i] - first))
			weight += weights[i]
		}
		out[g] = first + sum/weight
	}
	return out
}

// groupCosts answers, in O(1), the weighted squared error of a group of
// neighbouring points about its mean, from prefix sums of the weights, the
// weighted points and the weighted squared points. The points are shifted
// by their mean first, which keeps the sums small and their differences
// accurate.
type groupCosts struct {
	weight, sum, squares []float64 // prefix sums, len(points)+1 each
}

func newGroupCosts(points, weights []float64) groupCosts {
	m := len(points)
	shift := groupMeans(points, weights, []int{0, m})[0]
	c := groupCosts{
		weight:  make([]float64, m+1),
		sum:     make([]float64, m+1),
		squares: make([]float64, m+1),
	}
	for i, p := range points {
		d := p - shift
		c.weight[i+1] = c.weight[i] + weights[i]
		c.sum[i+1] = c.sum[i] + float64(weights[i]*d)
		c.squares[i+1] = c.squares[i] + float64(weights[i]*d*d)
	}
	return c
}

// points returns the number of points.
func (c groupCosts) points() int { return len(c.weight) - 1 }

// cost returns the weighted squared error of points i .. j-1 (i < j) about
// their weighted mean. Rounding can make the difference slightly negative;
// it is then 0.
func (c groupCosts) cost(i, j int) float64 {
	s := c.sum[j] - c.sum[i]
	return max(0, c.squares[j]-c.squares[i]-float64(s*s/(c.weight[j]-c.weight[i])))
}

// layeredBoundaries solves the programme of Wang and Song (2011) one layer
// per group: best[g][j] is the least cost of putting the first j points into
// g groups, best[g][j] = min over i of best[g-1][i] + cost(i, j). The
// minimising i is non-decreasing in j, because the cost satisfies the
// quadrangle inequality, so each layer is solved by divide and conquer: the
// middle end point is solved by a scan, and it bounds the split points of
// the end points on either side. Only end points that leave at least one
// point for each later group are solved: j in [g, m-k+g].
func (c groupCosts) layeredBoundaries(k int) []int {
	m := c.points()
	width := m - k + 1
	prev := make([]float64, m+1)
	cur := make([]float64, m+1)
	splits := make([]int32, (k-1)*width) // row g-2 holds layer g's split points
	for j := 1; j <= width; j++ {
		prev[j] = c.cost(0, j)
	}
	for g := 2; g <= k; g++ {
		row := splits[(g-2)*width : (g-1)*width]
		var solve func(jLo, jHi, iLo, iHi int)
		solve = func(jLo, jHi, iLo, iHi int) {
			if jLo > jHi {
				return
			}
			j := (jLo + jHi) / 2
			best, bestI := math.Inf(1), iLo
			for i := iLo; i <= min(iHi, j-1); i++ {
				if v := prev[i] + c.cost(i, j); v < best {
					best, bestI = v, i
				}
			}
			cur[j] = best
			row[j-g] = int32(bestI)
			solve(jLo, j-1, iLo, bestI)
			solve(j+1, jHi, bestI, iHi)
		}
		solve(g, m-k+g, g-1, m-k+g-1)
		prev, cur = cur, prev
	}
	bounds := make([]int, k+1)
	bounds[k] = m
	for g := k; g >= 2; g-- {
		bounds[g-1] = int(splits[(g-2)*width+bounds[g]-g])
	}
	return bounds
}

// pricedBoundaries finds a partition into exactly k groups by pricing each
// group at lambda and minimising cost + lambda·groups, which needs no layer
// per group (Aggarwal, Schieber and Tokuyama 1994). The number of groups of
// the priced optimum falls as lambda rises, so lambda is bisected over the
// ordered bit patterns of float64 between a price at which every point is a
// group (m > k groups) and one at which all points form one group (1 < k).
// When a price gives exactly k groups, that partition is optimal for k. When
// the bisection ends between two neighbouring prices with more and fewer
// groups, the two partitions are spliced (see splice).
func (c groupCosts) pricedBoundaries(k int) []int {
	bounds, _ := c.pricedSearch(k)
	return bounds
}

// pricedSearch is pricedBoundaries that also tells whether the result was
// spliced.
func (c groupCosts) pricedSearch(k int) (bounds []int, spliced bool) {
	m := c.points()
	solver := newPricedSolver(c)
	// Above the cost of one group, every extra group costs more than it can
	// save; at the negated price, every split pays.
	top := 2*c.cost(0, m) + 1
	more := make([]int, m+1) // every point its own group
	for i := range more {
		more[i] = i
	}
	fewer := []int{0, m}
	lo, hi := orderedKey(-top), orderedKey(top)
	for hi-lo > 1 {
		mid := lo + (hi-lo)/2
		bounds := solver.solve(fromOrderedKey(mid))
		switch groups := len(bounds) - 1; {
		case groups == k:
			return bounds, false
		case groups > k:
			lo, more = mid, bounds
		default:
			hi, fewer = mid, bounds
		}
	}
	return splice(fewer, more, k), true
}

// splice combines a partition with fewer than k groups and one with more
// than k into one with exactly k, by taking the first groups of the larger
// partition and the last groups of the smaller. With a = fewer (k1 groups),
// b = more and t = k-k1, it finds the first j with b[j+t+1] <= a[j+1]
// (j = k1-1 always qualifies, both being m); then a[j] <= b[j+t] (for j = 0
// both sides start at 0, otherwise the test failed at j-1), so group j+t+1
// of b nests inside group j+1 of a. Exchanging their ends yields
// b[0..j+t] ++ a[j+1..k1] with k groups and its complement, whose costs sum
// to no more than the originals by the quadrangle inequality. When both
// partitions are optimal for one price, the spliced one is therefore optimal
// for that price, hence for k groups; for two neighbouring prices it is
// optimal up to k times their difference.
func splice(fewer, more []int, k int) []int {
	t := k - (len(fewer) - 1)
	j := 0
	for more[j+t+1] > fewer[j+1] {
		j++
	}
	out := make([]int, 0, k+1)
	out = append(out, more[:j+t+1]...)
	return append(out, fewer[j+1:]...)
}

// pricedSolver finds, for a price per group, a partition minimising
// cost + price·groups, in O(m log m) by the method of Hirschberg and Larmore
// (1987): best[j] = min over i < j of best[i] + cost(i, j) + price. Because
// the cost satisfies the quadrangle inequality, once a later split point i2
// is at least as good as an earlier i1 for some end point it stays so for
// all later end points. A queue therefore holds the candidate split points
// that can still win, each with the first end point from which it wins; a
// new candidate displaces those it beats from their first end point on, and
// a binary search finds where it overtakes the last one it does not.
type pricedSolver struct {
	costs groupCosts
	best  []float64
	from  []int32
	queue []candidate
}

// candidate is a split point and the first end point from which it wins.
type candidate struct{ split, start int }

func newPricedSolver(c groupCosts) *pricedSolver {
	m := c.points()
	return &pricedSolver{
		costs: c,
		best:  make([]float64, m+1),
		from:  make([]int32, m+1),
		queue: make([]candidate, 0, m),
	}
}

// value is the cost of the first j points when the last group starts at
// split i, before the price of that group.
func (s *pricedSolver) value(i, j int) float64 {
	return s.best[i] + s.costs.cost(i, j)
}

// solve returns the boundaries of a partition minimising
// cost + price·groups.
func (s *pricedSolver) solve(price float64) []int {
	m := s.costs.points()
	queue, head := s.queue[:0], 0
	for j := 1; j <= m; j++ {
		queue = s.push(queue, head, j-1)
		for head+1 < len(queue) && queue[head+1].start <= j {
			head++
		}
		i := queue[head].split
		s.best[j] = s.value(i, j) + price
		s.from[j] = int32(i)
	}
	s.queue = queue
	groups := 0
	for j := m; j > 0; j = int(s.from[j]) {
		groups++
	}
	bounds := make([]int, groups+1)
	for j, g := m, groups; g >= 0; g-- {
		bounds[g] = j
		if j > 0 {
			j = int(s.from[j])
		}
	}
	return bounds
}

// push adds split point i, usable for end points from i+1 on, to the queue
// whose live part starts at head, and returns the queue.
func (s *pricedSolver) push(queue []candidate, head, i int) []candidate {
	m := s.costs.points()
	first := i + 1
	for len(queue) > head {
		last := queue[len(queue)-1]
		at := max(last.start, first)
		if s.value(i, at) <= s.value(last.split, at) {
			queue = queue[:len(queue)-1]
			continue
		}
		// i loses at 'at'; find the first later end point where it wins.
		n := sort.Search(m-at, func(d int) bool {
			j := at + 1 + d
			return s.value(i, j) <= s.value(last.split, j)
		})
		if at+1+n <= m {
			queue = append(queue, candidate{split: i, start: at + 1 + n})
		}
		return queue
	}
	return append(queue, candidate{split: i, start: first})
}

// orderedKey maps a float64 to a uint64 whose order is the numeric order of
// the floats (NaN aside), so that bisection over keys visits every float.
func orderedKey(x float64) uint64 {
	b := math.Float64bits(x)
	if b>>63 == 1 {
		return ^b
	}
	return b | 1<<63
}

// fromOrderedKey inverts orderedKey.
func fromOrderedKey(k uint64) float64 {
	if k>>63 == 1 {
		return math.Float64frombits(k &^ (1 << 63))
	}
	return math.Float64frombits(^k)
}
