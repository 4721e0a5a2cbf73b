package format

import (
	"bytes"
	"encoding/binary"
	"ingot/compile/fixture"
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"ingot/compile/tables"
)

// quantizeByRounding gives every order of t codebooks made by rounding the
// values to a grid of the given step (a simple quantizer, enough to test the
// encoding; the real trainers live in package quantize).
func quantizeByRounding(t *tables.Tables, step float64, fromOrder int) {
	round := func(v []float32) []float32 {
		var cb []float32
		for i, x := range v {
			if math.IsInf(float64(x), 0) {
				cb = append(cb, x)
				continue
			}
			v[i] = float32(math.Round(float64(x)/step) * step)
			cb = append(cb, v[i])
		}
		slices.Sort(cb)
		return slices.Compact(cb)
	}
	for k := fromOrder; k <= t.Order(); k++ {
		lv := &t.Levels[k-1]
		lv.ProbCodebook = round(lv.LogProb)
		if lv.LogBackoff != nil {
			lv.BackoffCodebook = round(lv.LogBackoff)
		}
	}
}

func TestQuantizedColumnsRoundTrip(t *testing.T) {
	for _, step := range []float64{0.5, 0.05, 0.001, 1e-5} {
		tb := fixture.RandomTables(7, 300, []int{2000, 3000, 1000})
		quantizeByRounding(tb, step, 2)
		data := mustMarshalTables(t, tb)
		if v := binary.LittleEndian.Uint32(data[offVersion:]); v != 2 {
			t.Fatalf("quantized model written as version %d", v)
		}
		m := mustOpen(t, data)
		back, err := ToTables(m)
		if err != nil {
			t.Fatal(err)
		}
		if diff := cmp.Diff(tb, back); diff != "" {
			t.Fatalf("step %v: round trip differs (-want +got):\n%s", step, diff)
		}
		for k := 2; k <= tb.Order(); k++ {
			cb := m.Codebook(k, false)
			for i := 0; i < tb.Len(k); i += 37 {
				j, ok := m.Index(k, i, false)
				if !ok || cb[j] != tb.Levels[k-1].LogProb[i] {
					t.Fatalf("order %d entry %d: index %d (%v) gives %v, want %v", k, i, j, ok, cb[j], tb.Levels[k-1].LogProb[i])
				}
			}
		}
		if err := m.Verify(); err != nil {
			t.Errorf("step %v: verify: %v", step, err)
		}
		if full, _ := Size(tb); full >= int64(len(mustMarshal(t, fixture.RandomTables(7, 300, []int{2000, 3000, 1000})))) && step >= 0.05 {
			t.Errorf("step %v: quantized file (%d bytes) not smaller", step, full)
		}
	}
}

func TestUnquantizedModelsStayVersionOne(t *testing.T) {
	data := mustMarshalTables(t, fixture.RandomTables(3, 50, []int{100}))
	if v := binary.LittleEndian.Uint32(data[offVersion:]); v != 1 {
		t.Errorf("plain model written as version %d", v)
	}
}

func TestPackedIndexesAtEveryWidth(t *testing.T) {
	for levels := 2; levels <= 1<<16; levels *= 3 {
		cb := make([]float32, levels)
		for j := range cb {
			cb[j] = float32(j)
		}
		values := make([]float32, 1001)
		for i := range values {
			values[i] = cb[(i*7919)%levels]
		}
		idx, ok := codebookIndexes(values, cb)
		if !ok {
			t.Fatal("value outside codebook")
		}
		b := packIndexes(idx, len(cb))
		width := bitsFor(levels)
		c := column{packed: b[packedHeader:], bits: width, codebook: floatBytes(cb), n: len(values)}
		for i, v := range values {
			if got := c.at(i); got != v {
				t.Fatalf("%d levels (%d bits): entry %d = %v, want %v", levels, width, i, got, v)
			}
		}
	}
}

func TestPackedRefusedInVersionOne(t *testing.T) {
	tb := fixture.RandomTables(5, 40, []int{60})
	quantizeByRounding(tb, 0.1, 2)
	data := mustMarshalTables(t, tb)
	binary.LittleEndian.PutUint32(data[offVersion:], 1)
	reseal(data)
	_, err := FromBytes(data)
	if err == nil || !strings.Contains(err.Error(), "which format version 1 does not allow") {
		t.Errorf("got %v", err)
	}
}

// TestFloatBytesEitherWay checks that a column's bytes are the same read in
// place on a little-endian machine as put one by one in little-endian order
// (IEEE 754 single precision, the file's float layout), NaN payloads and
// negative zero included.
func TestFloatBytesEitherWay(t *testing.T) {
	v := []float32{0, float32(math.Copysign(0, -1)), 1.5, -2.25e-30, float32(math.Inf(-1)), math.Float32frombits(0x7fc00001), math.MaxFloat32}
	inPlace := floatBytes(v)
	defer func(was bool) { littleEndian = was }(littleEndian)
	littleEndian = false
	copied := floatBytes(v)
	if !bytes.Equal(inPlace, copied) {
		t.Fatalf("in place % x, copied % x", inPlace, copied)
	}
	for i, f := range v {
		if got := binary.LittleEndian.Uint32(copied[4*i:]); got != math.Float32bits(f) {
			t.Errorf("value %d: bytes hold %#x, want %#x", i, got, math.Float32bits(f))
		}
	}
	if len(floatBytes(nil)) != 0 {
		t.Error("no values gave bytes")
	}
}
