package verify_test

import (
	"fmt"

	"ingot/verify"
)

// ExampleFile verifies the hand-built golden model: every check holds, and
// every one of its contexts sums to one up to the rounding of float32
// storage.
func ExampleFile() {
	rep, err := verify.File("../spec/golden/tiny.ingot", verify.Options{})
	if err != nil {
		fmt.Println(err) // not a model file at all
		return
	}
	for _, c := range rep.Checks {
		fmt.Printf("%-15s %s\n", c.Name, c.Status)
	}
	n := rep.Normalisation
	fmt.Printf("%d contexts, largest |S-1| below 1e-7: %v, ok: %v\n", n.Contexts, n.MaxDeviation < 1e-7, rep.OK())
	// Output:
	// header          pass
	// directory       pass
	// checksums       pass
	// digest          pass
	// padding         pass
	// opens           pass
	// vocabulary      pass
	// prefix-closure  pass
	// ids             pass
	// order           pass
	// values          pass
	// suffix-closure  pass
	// normalisation   pass
	// 26 contexts, largest |S-1| below 1e-7: true, ok: true
}
