package verify

import (
	"crypto/ed25519"
	"ingot/compile/fixture"
	"os"
	"testing"

	"ingot/compile/estimate"
	"ingot/format"
	"ingot/quantize"
)

// FuzzBytes verifies arbitrary bytes: nothing may panic, and a report
// comes back exactly when the bytes start with the magic. The seeds are
// real models, whole, cut and resealed after damage.
func FuzzBytes(f *testing.F) {
	tiny, err := os.ReadFile(golden)
	if err != nil {
		f.Fatal(err)
	}
	random := marshal(f, fixture.RandomTables(5, 20, []int{60, 80, 80}))
	f.Add(tiny)
	f.Add(random)
	f.Add(tiny[:300])
	damaged := append([]byte(nil), random...)
	damaged[len(damaged)/2] ^= 0xff
	f.Add(reseal(damaged))
	// A quantized (format version 2) and a signed model, so that the
	// codebook and signature sections are reached too.
	q, _, err := quantize.Model(fixture.Estimate(f, fixture.Train(f, 200), 3, estimate.Options{Method: estimate.KneserNey}),
		quantize.Options{Bits: 4, Trainer: quantize.LeastSquares})
	if err != nil {
		f.Fatal(err)
	}
	quantized := marshal(f, q)
	f.Add(quantized)
	signed, err := format.Sign(quantized, ed25519.NewKeyFromSeed(make([]byte, ed25519.SeedSize)))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(signed)
	// The same models in format version 3, whose succinct sections the
	// fuzzer then damages.
	f.Add(marshal3(f, fixture.RandomTables(5, 20, []int{60, 80, 80})))
	quantized3 := marshal3(f, q)
	f.Add(quantized3)
	damaged3 := append([]byte(nil), quantized3...)
	damaged3[len(damaged3)/2] ^= 0x10
	f.Add(reseal(damaged3))
	f.Fuzz(func(t *testing.T, data []byte) {
		rep, err := Bytes(data, Options{})
		if (rep == nil) == (err == nil) {
			t.Fatalf("report %v with error %v", rep != nil, err)
		}
	})
}
