package inspect

import (
	"os"
	"strings"
	"testing"

	"ingot/compile/counts"
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
	text, err := os.ReadFile("../cmd/ingot/demodata/commands.txt")
	if err != nil {
		t.Fatal(err)
	}
	c, err := counts.NewCounter(3)
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range strings.Split(string(text), "\n") {
		if f := strings.Fields(line); len(f) > 0 {
			c.AddSentence(f)
		}
	}
	tb, _, err := estimate.Estimate(c.Counts(1), estimate.Options{Method: estimate.KneserNey, Order: 3})
	if err != nil {
		t.Fatal(err)
	}
	return tb
}

// fromTables writes tb and opens the bytes as a model.
func fromTables(t testing.TB, tb *tables.Tables) *format.Model {
	t.Helper()
	data, err := format.Marshal(tb)
	if err != nil {
		t.Fatal(err)
	}
	m, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// demoModels returns the demo model, plain and quantized to 8 bits.
func demoModels(t testing.TB) (plain, quantized *format.Model) {
	t.Helper()
	tb := demoTables(t)
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	return fromTables(t, tb), fromTables(t, q)
}
