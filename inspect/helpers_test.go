package inspect

import (
	"ingot/compile/fixture"
	"ingot/format/formattest"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

// golden is the hand-built order-3 model of the format specification.
const golden = "../spec/golden/tiny.ingot"

func openGolden(t testing.TB) *format.Model {
	t.Helper()
	m, err := format.Open(golden)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { m.Close() })
	return m
}

// demoTables estimates an order-3 modified Kneser-Ney model of the bundled
// demo corpus (invented spoken commands of a wetland reserve's field unit).
func demoTables(t testing.TB) *tables.Tables {
	t.Helper()
	return fixture.Estimate(t, fixture.Demo(t), 3, estimate.Options{Method: estimate.KneserNey})
}

// demoModels returns the demo model, plain and quantized to 8 bits.
func demoModels(t testing.TB) (plain, quantized *format.Model) {
	t.Helper()
	tb := demoTables(t)
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	return formattest.Open(t, tb), formattest.Open(t, q)
}
