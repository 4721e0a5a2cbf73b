//go:build ignore

// split writes the State of the Union text as the tests and benchmarks
// divide it: every tenth sentence held out (corpus.Split), the rest for
// training.
//
//	go run testdata/sotu/split.go TRAIN HELDOUT
package main

import (
	"fmt"
	"os"
	"strings"

	"ingot/compile/corpus"
)

func main() {
	if len(os.Args) != 3 {
		fmt.Fprintln(os.Stderr, "usage: go run testdata/sotu/split.go TRAIN HELDOUT")
		os.Exit(2)
	}
	all, err := corpus.SOTU()
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	train, held := corpus.Split(all, 0)
	for i, part := range [][]string{train, held} {
		if err := os.WriteFile(os.Args[1+i], []byte(strings.Join(part, "\n")+"\n"), 0o644); err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
	}
}
