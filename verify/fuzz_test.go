package verify

import (
	"os"
	"testing"
)

// FuzzBytes verifies arbitrary bytes: nothing may panic, and a report
// comes back exactly when the bytes start with the magic. The seeds are
// real models, whole, cut and resealed after damage.
func FuzzBytes(f *testing.F) {
	tiny, err := os.ReadFile(golden)
	if err != nil {
		f.Fatal(err)
	}
	random := marshal(f, randomTables(5, 20, []int{60, 80, 80}))
	f.Add(tiny)
	f.Add(random)
	f.Add(tiny[:300])
	damaged := append([]byte(nil), random...)
	damaged[len(damaged)/2] ^= 0xff
	f.Add(reseal(damaged))
	f.Fuzz(func(t *testing.T, data []byte) {
		rep, err := Bytes(data, Options{})
		if (rep == nil) == (err == nil) {
			t.Fatalf("report %v with error %v", rep != nil, err)
		}
	})
}
