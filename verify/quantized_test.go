package verify

import (
	"ingot/compile/fixture"
	"slices"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
)

// losslessCodebooks gives every column a codebook of its distinct values:
// a version-2 file whose values are exactly the unquantized ones.
func losslessCodebooks(tb *tables.Tables) {
	for k := range tb.Levels {
		lv := &tb.Levels[k]
		lv.ProbCodebook = distinct(lv.LogProb)
		if lv.LogBackoff != nil {
			lv.BackoffCodebook = distinct(lv.LogBackoff)
		}
	}
}

func distinct(v []float32) []float32 {
	s := slices.Clone(v)
	slices.Sort(s)
	return slices.Compact(s)
}

// A quantized file (format version 2: packed codebook indexes) is read
// through the format reader's columns; losslessly quantized it passes like
// the original, and an index past its codebook is a named values problem.
func TestQuantizedModel(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 400), 3, estimate.Options{Method: estimate.KneserNey})
	losslessCodebooks(tb)
	data := marshal(t, tb)
	rep := run(t, data, Options{})
	if !rep.OK() || rep.Version != 2 {
		t.Fatalf("version %d, failed %v:%s", rep.Version, rep.Failed(), problems(rep))
	}

	// Point an entry past the codebook: every index bit set.
	b, name := where(t, data, format.KindProbabilities, 2)
	width := int(binaryLE32(b))
	if L := len(tb.Levels[1].ProbCodebook); L == 1<<width {
		t.Skipf("codebook of %d values fills its %d bits", L, width)
	}
	for bit := 0; bit < width; bit++ {
		b[8+bit/8] |= 1 << (bit % 8)
	}
	rep = run(t, reseal(data), Options{})
	c := rep.Check(CheckValues)
	if c.Status != Fail || c.Problems[0].Section != name || !strings.Contains(c.Problems[0].Msg, "outside the") {
		t.Errorf("values %s %v; want a codebook index problem in %s", c.Status, c.Problems, name)
	}
}
