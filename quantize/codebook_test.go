package quantize

import (
	"math"
	"strings"
	"testing"
)

// The expected values in this file follow from the definitions: the nearest
// level is the one at the least distance, and the summaries are minima,
// maxima and differences of the listed levels.

func TestIndex(t *testing.T) {
	c := Codebook{Values: []float32{-4, -1, 0, 2.5}}
	tests := []struct {
		name string
		v    float32
		want int
	}{
		{"below the first level", -100, 0},
		{"on the first level", -4, 0},
		{"just below the first midpoint", -2.51, 0},
		{"on the first midpoint goes to the lower level", -2.5, 0},
		{"just above the first midpoint", -2.49, 1},
		{"on a middle level", 0, 2},
		{"on the last midpoint goes to the lower level", 1.25, 2},
		{"just above the last midpoint", 1.26, 3},
		{"above the last level", 1e30, 3},
		{"negative infinity", float32(math.Inf(-1)), 0},
		{"positive infinity", float32(math.Inf(1)), 3},
		{"NaN maps to the last level", float32(math.NaN()), 3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := c.Index(tt.v); got != tt.want {
				t.Errorf("Index(%v) = %d, want %d", tt.v, got, tt.want)
			}
		})
	}
	if got := (Codebook{Values: []float32{7}}).Index(-3); got != 0 {
		t.Errorf("one level: Index = %d, want 0", got)
	}
	if got := (Codebook{}).Index(1); got != -1 {
		t.Errorf("no levels: Index = %d, want -1", got)
	}
}

// TestIndexIsNearestLevel checks the binary search against a scan of every
// level, on random codebooks and values (law: the nearest level is the one at
// the least distance, ties to the lower as documented).
func TestIndexIsNearestLevel(t *testing.T) {
	r := newRand(11)
	for trial := range 200 {
		raw := make([]float64, 1+r.IntN(40))
		for i := range raw {
			raw[i] = math.Round(r.NormFloat64()*50) / 8 // coarse, so that ties occur
		}
		c := codebookFrom(sortedCopy(raw))
		for range 50 {
			v := float32(math.Round(r.NormFloat64()*60) / 16)
			want := 0
			for i, l := range c.Values {
				if math.Abs(float64(v)-float64(l)) < math.Abs(float64(v)-float64(c.Values[want])) {
					want = i
				}
			}
			if got := c.Index(v); got != want {
				t.Fatalf("trial %d: Index(%v) = %d, nearest is %d in %v", trial, v, got, want, c.Values)
			}
			if got := c.Value(c.Index(v)); got != c.Values[want] {
				t.Fatalf("trial %d: Value(Index(%v)) = %v, want %v", trial, v, got, c.Values[want])
			}
		}
	}
}

func TestSummaries(t *testing.T) {
	tests := []struct {
		name          string
		levels        []float32
		values        []float64
		min, max      float32
		gap, maxError float64
	}{
		{"no levels", nil, nil, 0, 0, 0, 0},
		{"one level", []float32{-2}, []float64{-3, -2, 0.5}, -2, -2, 0, 2.5},
		{"uneven levels", []float32{-6, -2, -1.5, 0}, []float64{-7, -4, -1.75, -0.5, 0.25}, -6, 0, 4, 2},
		{"values on levels", []float32{1, 2, 4}, []float64{1, 2, 4}, 1, 4, 2, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := Codebook{Values: tt.levels}
			if c.Min() != tt.min || c.Max() != tt.max {
				t.Errorf("Min, Max = %v, %v; want %v, %v", c.Min(), c.Max(), tt.min, tt.max)
			}
			if got := c.LargestGap(); got != tt.gap {
				t.Errorf("LargestGap = %v, want %v", got, tt.gap)
			}
			if got := c.MaxAbsError(tt.values); got != tt.maxError {
				t.Errorf("MaxAbsError = %v, want %v", got, tt.maxError)
			}
			if c.Len() != len(tt.levels) {
				t.Errorf("Len = %d, want %d", c.Len(), len(tt.levels))
			}
		})
	}
	if got := (Codebook{}).MaxAbsError([]float64{1}); !math.IsNaN(got) {
		t.Errorf("MaxAbsError with no levels = %v, want NaN", got)
	}
}

func TestValidate(t *testing.T) {
	tooMany := make([]float32, MaxLevels+1)
	for i := range tooMany {
		tooMany[i] = float32(i)
	}
	tests := []struct {
		name    string
		levels  []float32
		wantErr string // empty: valid
	}{
		{"one level", []float32{0}, ""},
		{"ascending", []float32{-3, -1, 2}, ""},
		{"most levels", tooMany[:MaxLevels], ""},
		{"no levels", nil, "no levels"},
		{"too many levels", tooMany, "65537 levels"},
		{"repeated level", []float32{1, 2, 2}, "level 2 (2) is not above level 1"},
		{"descending", []float32{3, 1}, "level 1 (1) is not above level 0"},
		{"NaN", []float32{0, float32(math.NaN())}, "level 1 is NaN"},
		{"infinite", []float32{float32(math.Inf(-1)), 0}, "level 0 is -Inf"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := Codebook{Values: tt.levels}.Validate()
			switch {
			case tt.wantErr == "" && err != nil:
				t.Errorf("Validate = %v, want nil", err)
			case tt.wantErr != "" && (err == nil || !strings.Contains(err.Error(), tt.wantErr)):
				t.Errorf("Validate = %v, want an error containing %q", err, tt.wantErr)
			}
		})
	}
}

func TestMeanSquaredError(t *testing.T) {
	c := Codebook{Values: []float32{0, 1}}
	tests := []struct {
		name   string
		values []float64
		want   float64
	}{
		// (0.25² + 0.5² + 0.25² + 2²) / 4, worked by hand.
		{"mixed", []float64{0.25, 0.5, 0.75, 3}, (0.0625 + 0.25 + 0.0625 + 4) / 4},
		{"on the levels", []float64{0, 1, 1}, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := MeanSquaredError(tt.values, c); got != tt.want {
				t.Errorf("MeanSquaredError = %v, want %v", got, tt.want)
			}
		})
	}
	if got := MeanSquaredError(nil, c); !math.IsNaN(got) {
		t.Errorf("no values: %v, want NaN", got)
	}
}

func TestCodebookFromMergesAndNormalises(t *testing.T) {
	// 1 and 1+2^-40 are one float32; -0 becomes 0.
	got := codebookFrom([]float64{math.Copysign(0, -1), 1, 1 + 1.0/(1<<40), 2})
	want := []float32{0, 1, 2}
	if len(got.Values) != len(want) || math.Signbit(float64(got.Values[0])) {
		t.Fatalf("codebookFrom = %v, want %v with +0", got.Values, want)
	}
	for i := range want {
		if got.Values[i] != want[i] {
			t.Fatalf("codebookFrom = %v, want %v", got.Values, want)
		}
	}
}

func BenchmarkIndex(b *testing.B) {
	values := logProbLikeSample(1<<16, 5)
	for _, levels := range []int{256, 65536} {
		c, err := Train(values, levels, EqualMass)
		if err != nil {
			b.Fatal(err)
		}
		b.Run(levelsName(levels), func(b *testing.B) {
			queries := make([]float32, len(values))
			for i, v := range values {
				queries[i] = float32(v)
			}
			sum := 0
			for b.Loop() {
				for _, q := range queries {
					sum += c.Index(q)
				}
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(queries)), "ns/value")
			_ = sum
		})
	}
}
