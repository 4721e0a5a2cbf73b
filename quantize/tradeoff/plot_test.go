package tradeoff

import (
	"slices"
	"testing"

	"gonum.org/v1/plot/plotter"
)

// Points drawn at one place (thresholds too small to remove anything) get
// one label naming the first and last threshold; others keep their own.
func TestMergeLabels(t *testing.T) {
	xys := plotter.XYs{{X: 10, Y: 3}, {X: 12, Y: 2.9}, {X: 14, Y: 2.8}, {X: 14, Y: 2.8}, {X: 14, Y: 2.8}}
	at, names := mergeLabels(xys, []string{"1e-05", "1e-06", "1e-07", "0", "1e-08"})
	if len(at) != 3 || !slices.Equal(names, []string{"1e-05", "1e-06", "0 to 1e-07"}) {
		t.Errorf("%v %v", at, names)
	}
}

// A size axis narrower than a decade still carries labelled ticks (1, 2
// and 5 times a power of ten), every tick inside the range.
func TestSizeTicks(t *testing.T) {
	var labels []string
	for _, tk := range (sizeTicks{}).Ticks(4.3, 21) {
		if tk.Value < 4.3 || tk.Value > 21 {
			t.Errorf("tick %v outside the range", tk.Value)
		}
		if tk.Label != "" {
			labels = append(labels, tk.Label)
		}
	}
	if !slices.Equal(labels, []string{"5", "10", "20"}) {
		t.Errorf("labels %v", labels)
	}
	if ticks := (sizeTicks{}).Ticks(0, 10); ticks != nil {
		t.Errorf("a range from 0 on a log axis: %v", ticks)
	}
}
