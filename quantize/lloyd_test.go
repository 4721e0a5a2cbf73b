package quantize

import (
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
)

// TestLloydNeverIncreasesError checks the property Lloyd (1982) proves for
// his method: neither step of a round can increase the mean squared error.
func TestLloydNeverIncreasesError(t *testing.T) {
	values := logProbLikeSample(20_000, 61)
	c := codebookFrom([]float64{-20, -19, -18, -1, 0}) // a poor start
	previous := MeanSquaredError(values, c)
	for round := 1; round <= 30; round++ {
		var err error
		if c, err = Lloyd(values, c, 1); err != nil {
			t.Fatal(err)
		}
		// One float32 rounding of the levels per round is allowed for.
		got := MeanSquaredError(values, c)
		if got > previous*(1+1e-6) {
			t.Fatalf("round %d raised the error from %.9g to %.9g", round, previous, got)
		}
		previous = got
	}
}

// TestLloydKeepsOptimalCodebook checks that the optimal codebook satisfies
// Lloyd's (1982) two necessary conditions of optimality (each value at its
// nearest level, each level the mean of its values), so that a Lloyd round
// leaves it where it is, up to float32 rounding.
func TestLloydKeepsOptimalCodebook(t *testing.T) {
	values := normalSample(20_000, 62)
	c, err := Train(values, 12, LeastSquares)
	if err != nil {
		t.Fatal(err)
	}
	refined, err := Lloyd(values, c, 1)
	if err != nil {
		t.Fatal(err)
	}
	if c.Len() != refined.Len() {
		t.Fatalf("Lloyd changed the number of levels from %d to %d", c.Len(), refined.Len())
	}
	for i := range c.Values {
		if d := float64(refined.Values[i] - c.Values[i]); d*d > 1e-12 {
			t.Errorf("level %d moved from %v to %v", i, c.Values[i], refined.Values[i])
		}
	}
}

// TestLloydWorkedExample follows two rounds by hand. Values 0 1 2 10 11 12,
// levels 0 and 1: midpoint 0.5, cells {0} and {1 2 10 11 12}, new levels 0
// and 7.2; midpoint 3.6, cells {0 1 2} and {10 11 12}, levels 1 and 11,
// where it stays.
func TestLloydWorkedExample(t *testing.T) {
	values := []float64{12, 0, 11, 1, 10, 2}
	tests := []struct {
		iterations int
		want       []float32
	}{
		{0, []float32{0, 1}},
		{1, []float32{0, 7.2}},
		{2, []float32{1, 11}},
		{50, []float32{1, 11}},
	}
	for _, tt := range tests {
		c, err := Lloyd(values, Codebook{Values: []float32{0, 1}}, tt.iterations)
		if err != nil {
			t.Fatal(err)
		}
		if diff := cmp.Diff(tt.want, c.Values); diff != "" {
			t.Errorf("%d iterations (-want +got):\n%s", tt.iterations, diff)
		}
	}
}

func TestLloydRejectsBadInput(t *testing.T) {
	good := Codebook{Values: []float32{0, 1}}
	tests := []struct {
		name       string
		values     []float64
		init       Codebook
		iterations int
		wantErr    string
	}{
		{"unsorted codebook", []float64{1}, Codebook{Values: []float32{1, 0}}, 1, "valid initial codebook"},
		{"empty codebook", []float64{1}, Codebook{}, 1, "no levels"},
		{"negative iterations", []float64{1}, good, -1, "not -1"},
		{"no values", nil, good, 1, "no values"},
		{"NaN", []float64{0, 0, 0, nan()}, good, 1, "value at index 3 is NaN"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Lloyd(tt.values, tt.init, tt.iterations)
			if err == nil || !strings.Contains(err.Error(), tt.wantErr) {
				t.Errorf("Lloyd error = %v, want one containing %q", err, tt.wantErr)
			}
		})
	}
}
