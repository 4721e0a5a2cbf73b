package inspect_test

import (
	"fmt"
	"os"

	"ingot/format"
	"ingot/inspect"
)

// ExampleSummarize prints a few facts a model file records about itself.
func ExampleSummarize() {
	m, err := format.Open("../spec/golden/tiny.ingot")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer m.Close()
	s := inspect.Summarize(m)
	fmt.Printf("version %d, %d bytes, order %d, %d words, n-grams %v\n", s.FormatVersion, s.FileBytes, s.Order, s.VocabularySize, s.NGrams)
	fmt.Println(s.Sections[4].Name, s.Sections[4].Offset, s.Sections[4].Checksum)
	fmt.Println(s.Signature.Status())
	// Output:
	// version 1, 1256 bytes, order 3, 11 words, n-grams [11 14 7]
	// probabilities of order 1 816 4087c8ef
	// unsigned
}

// ExampleDump lists the stored n-grams under a prefix as JSON Lines.
func ExampleDump() {
	m, err := format.Open("../spec/golden/tiny.ingot")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer m.Close()
	if _, err := inspect.Dump(os.Stdout, m, inspect.Selection{Prefix: []string{"the", "lamp"}}); err != nil {
		fmt.Println(err)
	}
	// Output:
	// {"ngram":"the lamp","order":2,"log10_prob":-0.39794,"log10_backoff":-0.22184876}
	// {"ngram":"the lamp was","order":3,"log10_prob":-0.15490197}
}

// ExampleNext ranks the words that may follow a context.
func ExampleNext() {
	m, err := format.Open("../spec/golden/tiny.ingot")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer m.Close()
	nw, err := inspect.Next(m, []string{"<s>", "the"}, 3)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range nw.Predictions {
		fmt.Printf("%-6s log10 %7.4f  p %.4f  order %d stored %v\n", p.Word, p.Log10, p.Probability, p.MatchedOrder, p.Stored)
	}
	fmt.Printf("all %d words: %.6f\n", nw.Candidates, nw.TotalProbability)
	// Output:
	// lamp   log10 -0.3010  p 0.5000  order 3 stored true
	// fog    log10 -0.4559  p 0.3500  order 3 stored true
	// horn   log10 -1.0000  p 0.1000  order 2 stored false
	// all 10 words: 1.000000
}
