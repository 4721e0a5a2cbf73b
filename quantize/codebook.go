package quantize

import (
	"fmt"
	"math"
	"sort"
)

// MaxLevels is the largest number of levels a codebook may have, so that an
// index fits in 16 bits.
const MaxLevels = 1 << 16

// Codebook is a scalar quantizer: a value is represented by the index of its
// nearest level. Values holds the levels, finite and strictly ascending; a
// codebook returned by Train or Lloyd always has at least one level and at
// most MaxLevels.
type Codebook struct {
	Values []float32
}

// Len returns the number of levels.
func (c Codebook) Len() int { return len(c.Values) }

// Value returns level i. Like a slice index, it panics when i is out of
// range.
func (c Codebook) Value(i int) float32 { return c.Values[i] }

// Index returns the index of the level nearest to v; when v lies exactly
// half way between two levels it returns the lower one. Values below the
// first level map to 0 and values above the last to Len()-1; NaN maps to
// Len()-1. An empty codebook gives -1. The cost is O(log Len()): a binary
// search over the midpoints between neighbouring levels.
func (c Codebook) Index(v float32) int { return c.index(float64(v)) }

// index is Index for a float64 value. The midpoints are computed in float64,
// where the sum of two float32 numbers and its half are exact, so the
// comparison decides the nearest level without rounding.
func (c Codebook) index(v float64) int {
	if len(c.Values) == 0 {
		return -1
	}
	return sort.Search(len(c.Values)-1, func(i int) bool {
		return v <= c.midpoint(i)
	})
}

// midpoint returns the point half way between levels i and i+1.
func (c Codebook) midpoint(i int) float64 {
	return (float64(c.Values[i]) + float64(c.Values[i+1])) / 2
}

// Min returns the lowest level, or 0 for an empty codebook.
func (c Codebook) Min() float32 {
	if len(c.Values) == 0 {
		return 0
	}
	return c.Values[0]
}

// Max returns the highest level, or 0 for an empty codebook.
func (c Codebook) Max() float32 {
	if len(c.Values) == 0 {
		return 0
	}
	return c.Values[len(c.Values)-1]
}

// LargestGap returns the largest distance between neighbouring levels: the
// coarsest step of the quantizer inside its range. A value between the first
// and the last level is never rounded by more than half of it. It is 0 for a
// codebook with fewer than two levels.
func (c Codebook) LargestGap() float64 {
	gap := 0.0
	for i := 1; i < len(c.Values); i++ {
		gap = max(gap, float64(c.Values[i])-float64(c.Values[i-1]))
	}
	return gap
}

// MaxAbsError returns the largest absolute difference between a value and
// its nearest level, over the given values: the worst rounding error the
// codebook makes on them. It is 0 for no values, NaN when a value is NaN, and
// NaN for an empty codebook with at least one value.
func (c Codebook) MaxAbsError(values []float64) float64 {
	if len(values) > 0 && len(c.Values) == 0 {
		return math.NaN()
	}
	worst := 0.0
	for _, v := range values {
		worst = max(worst, math.Abs(v-float64(c.Values[c.index(v)])))
	}
	return worst
}

// Validate reports whether the codebook is usable: between 1 and MaxLevels
// levels, all finite and strictly ascending. It is meant for codebooks that
// were read back from a file.
func (c Codebook) Validate() error {
	switch n := len(c.Values); {
	case n == 0:
		return fmt.Errorf("quantize: codebook has no levels")
	case n > MaxLevels:
		return fmt.Errorf("quantize: codebook has %d levels, more than the %d allowed", n, MaxLevels)
	}
	for i, v := range c.Values {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return fmt.Errorf("quantize: codebook level %d is %v", i, v)
		}
		if i > 0 && v <= c.Values[i-1] {
			return fmt.Errorf("quantize: codebook level %d (%v) is not above level %d (%v)", i, v, i-1, c.Values[i-1])
		}
	}
	return nil
}

// MeanSquaredError returns the mean of the squared differences between each
// value and its nearest level: the distortion that both trainers and Lloyd
// minimise. It is NaN for no values or an empty codebook.
func MeanSquaredError(values []float64, c Codebook) float64 {
	if len(values) == 0 || len(c.Values) == 0 {
		return math.NaN()
	}
	sum := 0.0
	for _, v := range values {
		d := v - float64(c.Values[c.index(v)])
		sum += d * d
	}
	return sum / float64(len(values))
}

// codebookFrom rounds ascending float64 levels to float32 and drops levels
// that become equal to their predecessor (rounding keeps the order). Negative
// zero becomes zero.
func codebookFrom(levels []float64) Codebook {
	out := make([]float32, 0, len(levels))
	for _, l := range levels {
		v := float32(l)
		if v == 0 {
			v = 0
		}
		if len(out) > 0 && v == out[len(out)-1] {
			continue
		}
		out = append(out, v)
	}
	return Codebook{Values: out}
}
