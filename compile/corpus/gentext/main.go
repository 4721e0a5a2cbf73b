// Command gentext writes seeded synthetic text (corpus.Generate) for the
// scale benchmarks: gentext SEED SENTENCES VOCABULARY > text.txt. The
// same arguments give the same bytes; the text is never committed.
package main

import (
	"fmt"
	"os"
	"strconv"

	"ingot/compile/corpus"
)

func main() {
	if len(os.Args) != 4 {
		fmt.Fprintln(os.Stderr, "usage: gentext SEED SENTENCES VOCABULARY")
		os.Exit(2)
	}
	var n [3]int
	for i, a := range os.Args[1:] {
		v, err := strconv.Atoi(a)
		if err != nil || v < 1 {
			fmt.Fprintf(os.Stderr, "gentext: %q is not a positive integer\n", a)
			os.Exit(2)
		}
		n[i] = v
	}
	if err := corpus.Generate(os.Stdout, uint64(n[0]), n[1], n[2]); err != nil {
		fmt.Fprintln(os.Stderr, "gentext:", err)
		os.Exit(1)
	}
}
