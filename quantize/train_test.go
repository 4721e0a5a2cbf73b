package quantize

import (
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
)

func TestTrainEdgeCases(t *testing.T) {
	// More distinct values than MaxLevels, far enough apart that the means
	// of any two groups of them stay distinct in float32.
	manyDistinct := make([]float64, 100_000)
	for i := range manyDistinct {
		manyDistinct[i] = float64(i)/1000 - 50
	}
	newRand(21).Shuffle(len(manyDistinct), func(i, j int) {
		manyDistinct[i], manyDistinct[j] = manyDistinct[j], manyDistinct[i]
	})
	tests := []struct {
		name   string
		values []float64
		levels int
		want   []float32 // nil: check only the level count
		count  int
	}{
		{"all values equal", []float64{-2.5, -2.5, -2.5, -2.5}, 4, []float32{-2.5}, 1},
		{"one value", []float64{-1}, 2, []float32{-1}, 1},
		{"fewer distinct values than levels", []float64{-3, -1, -3, 0, -1, -0.5}, 8, []float32{-3, -1, -0.5, 0}, 4},
		{"as many distinct values as levels", []float64{4, 1, 3, 2}, 4, []float32{1, 2, 3, 4}, 4},
		{"two levels", []float64{0, 1, 10, 11}, 2, []float32{0.5, 10.5}, 2},
		{"most levels", manyDistinct, MaxLevels, nil, MaxLevels},
	}
	for _, tt := range tests {
		for _, trainer := range Trainers() {
			t.Run(string(trainer)+"/"+tt.name, func(t *testing.T) {
				c, err := Train(tt.values, tt.levels, trainer)
				if err != nil {
					t.Fatal(err)
				}
				if err := c.Validate(); err != nil {
					t.Fatal(err)
				}
				if c.Len() != tt.count {
					t.Errorf("%d levels, want %d", c.Len(), tt.count)
				}
				if tt.want != nil {
					if diff := cmp.Diff(tt.want, c.Values); diff != "" {
						t.Errorf("levels (-want +got):\n%s", diff)
					}
				}
			})
		}
	}
}

func TestTrainRejectsBadInput(t *testing.T) {
	tests := []struct {
		name    string
		values  []float64
		levels  int
		trainer Trainer
		wantErr string
	}{
		{"NaN", []float64{0, 1, math.NaN()}, 2, LeastSquares, "value at index 2 is NaN"},
		{"positive infinity", []float64{math.Inf(1), 1}, 2, EqualMass, "value at index 0 is +Inf"},
		{"negative infinity", []float64{0, math.Inf(-1)}, 2, LeastSquares, "value at index 1 is -Inf"},
		{"beyond float32", []float64{0, 1, 2, 1e39}, 2, LeastSquares, "value at index 3 (1e+39) is beyond the float32 range"},
		{"one level", []float64{0, 1}, 1, LeastSquares, "1 levels asked for; levels must be from 2 to 65536"},
		{"too many levels", []float64{0, 1}, MaxLevels + 1, EqualMass, "65537 levels asked for"},
		{"no values", nil, 2, LeastSquares, "no values"},
		{"unknown trainer", []float64{0, 1}, 2, "kmeans", `unknown trainer "kmeans" (known: equal-mass, least-squares)`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Train(tt.values, tt.levels, tt.trainer)
			if err == nil || !strings.Contains(err.Error(), tt.wantErr) {
				t.Errorf("Train error = %v, want one containing %q", err, tt.wantErr)
			}
		})
	}
}

// TestTrainIsDeterministic checks that the input is left alone and that
// shuffled input gives the same codebook.
func TestTrainIsDeterministic(t *testing.T) {
	values := logProbLikeSample(5000, 22)
	original := slices.Clone(values)
	for _, trainer := range Trainers() {
		first, err := Train(values, 16, trainer)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(values, original) {
			t.Fatalf("%s: Train modified its input", trainer)
		}
		shuffled := slices.Clone(values)
		newRand(23).Shuffle(len(shuffled), func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
		second, err := Train(shuffled, 16, trainer)
		if err != nil {
			t.Fatal(err)
		}
		if diff := cmp.Diff(first, second); diff != "" {
			t.Errorf("%s: shuffled input gave another codebook (-first +second):\n%s", trainer, diff)
		}
	}
}

func TestParseTrainer(t *testing.T) {
	for _, want := range Trainers() {
		got, err := ParseTrainer(string(want))
		if err != nil || got != want {
			t.Errorf("ParseTrainer(%q) = %q, %v", want, got, err)
		}
	}
	if _, err := ParseTrainer("Least-Squares"); err == nil {
		t.Error("ParseTrainer accepted a name in the wrong case")
	}
}

// TestBinning checks equal-population binning against its definition: bin b
// of n sorted values holds positions floor(b·n/k) to floor((b+1)·n/k)-1 and
// its level is their mean (worked by hand below).
func TestBinning(t *testing.T) {
	tests := []struct {
		name   string
		values []float64
		levels int
		want   []float32
	}{
		{"even bins", []float64{8, 7, 6, 5, 4, 3, 2, 1}, 4, []float32{1.5, 3.5, 5.5, 7.5}},
		// 10 values, 3 bins: positions 0-2, 3-5, 6-9.
		{"uneven bins", []float64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}, 3, []float32{1, 4, 7.5}},
		// 7 values, 3 bins: {0,0} {0,0} {1,2,3}; the first two give one level.
		{"repeated values merge bins", []float64{0, 0, 0, 0, 1, 2, 3}, 3, []float32{0, 2}},
		// Heavy tail: the far value shares a bin, binning does not isolate it.
		{"outlier", []float64{-99, -3, -2.5, -2, -1, -0.5}, 2, []float32{-104.5 / 3, -3.5 / 3}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c, err := Train(tt.values, tt.levels, EqualMass)
			if err != nil {
				t.Fatal(err)
			}
			if diff := cmp.Diff(tt.want, c.Values); diff != "" {
				t.Errorf("levels (-want +got):\n%s", diff)
			}
		})
	}
}

// BenchmarkTrain trains on 1,000,000 values shaped like log10 probabilities
// (invented data, see logProbLikeSample).
func BenchmarkTrain(b *testing.B) {
	values := logProbLikeSample(1_000_000, 24)
	for _, trainer := range Trainers() {
		for _, levels := range []int{256, 4096, 65536} {
			b.Run(string(trainer)+"/"+levelsName(levels), func(b *testing.B) {
				var c Codebook
				for b.Loop() {
					var err error
					if c, err = Train(values, levels, trainer); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(values)), "ns/value")
				b.ReportMetric(math.Sqrt(MeanSquaredError(values, c)), "rms-error")
				b.ReportMetric(float64(c.Len()), "levels")
			})
		}
	}
}
