package verify

import (
	"bytes"
	"testing"

	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/format"
	"ingot/quantize"
)

// FuzzPipeline: any count file the loader accepts, at any order, with any
// method, discount and bit width, goes through compile, prune and
// quantize, and every model written on the way must pass verify (law of
// probability: every context sums to one within the tolerance for how its
// values are stored). An estimate the package refuses (counts beyond exact
// arithmetic, a discount leaving no mass) is an answer, not a failure; a
// model that is written and then fails verify is.
func FuzzPipeline(f *testing.F) {
	f.Add([]byte("2\ta\n2\t</s>\n2\t<s> a\n2\ta </s>\n"), uint8(2), uint8(0), 0.5, uint8(8), 1e-6)
	f.Add([]byte("3\tthe beacon\n3\tthe\n3\tbeacon\n3\t<s> the\n3\tbeacon </s>\n3\t</s>\n1\tlamp\n1\tthe lamp\n1\tlamp </s>\n"), uint8(3), uint8(3), 0.7, uint8(4), 1e-3)
	f.Add([]byte("5\tx\n1\ty\n2\t</s>\n5\t<s> x\n1\tx y\n2\ty </s>\n3\tx x\n"), uint8(2), uint8(1), 1e-17, uint8(2), 0.0)
	f.Fuzz(func(t *testing.T, data []byte, order, method uint8, discount float64, bits uint8, threshold float64) {
		N := 1 + int(order)%4
		c, err := counts.Load(N, []counts.Source{{Name: "f", R: bytes.NewReader(data)}})
		if err != nil {
			return
		}
		opt := estimate.Options{Method: estimate.Methods[int(method)%4], Order: N}
		if discount > 0 && discount < 1 {
			opt.Discount = discount
		} else {
			opt.AutoDiscount = discount < 0
		}
		tb, _, err := estimate.Estimate(c, opt)
		if err != nil {
			return
		}
		pass := func(what string, data []byte) {
			rep, err := Bytes(data, Options{})
			if err != nil {
				t.Fatalf("%s: %v", what, err)
			}
			if !rep.OK() {
				t.Fatalf("%s fails verify %v:%s", what, rep.Failed(), problems(rep))
			}
		}
		var buf bytes.Buffer
		if err := format.Write(&buf, tb); err != nil {
			t.Fatalf("compiled model not written: %v", err)
		}
		pass("compiled model", buf.Bytes())
		if threshold > 0 && N >= 2 {
			p := prune.Apply(tb, prune.Keep(tb, prune.EntropyScores(tb), threshold))
			prune.Renormalize(p)
			buf.Reset()
			if err := format.Write(&buf, p); err != nil {
				t.Fatalf("pruned model not written: %v", err)
			}
			pass("pruned model", buf.Bytes())
			tb = p
		}
		q, _, err := quantize.Model(tb, quantize.Options{Bits: 2 + int(bits)%7, Trainer: quantize.LeastSquares})
		if err != nil {
			return // e.g. a context that keeps no mass at so few bits: refused, not written
		}
		buf.Reset()
		if err := format.Write(&buf, q); err != nil {
			t.Fatalf("quantized model not written: %v", err)
		}
		pass("quantized model", buf.Bytes())
	})
}
