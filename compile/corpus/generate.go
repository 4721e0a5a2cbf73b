package corpus

import (
	"bufio"
	"fmt"
	"io"
	"math/rand/v2"
)

// Generate writes n sentences of synthetic text for benchmarks and
// stress tests: words drawn from a Zipf distribution over a vocabulary of
// the given size (exponent 1.1, as word frequencies roughly follow), with a
// first-order dependence so that n-grams repeat the way text's do, and
// sentence lengths from 3 to 30 tokens. The same seed gives the same text.
// Large inputs are generated, never committed.
func Generate(w io.Writer, seed uint64, n, vocab int) error {
	r := rand.New(rand.NewPCG(seed, 0x5eed))
	zipf := rand.NewZipf(r, 1.1, 1, uint64(vocab-1))
	bw := bufio.NewWriterSize(w, 1<<16)
	for i := 0; i < n; i++ {
		length := 3 + r.IntN(28)
		prev := zipf.Uint64()
		for j := 0; j < length; j++ {
			word := zipf.Uint64()
			if r.IntN(3) == 0 {
				// Half-predictable continuations: the next word depends on
				// the previous one.
				word = (prev*7919 + uint64(r.IntN(4))) % uint64(vocab)
			}
			if j > 0 {
				bw.WriteByte(' ')
			}
			fmt.Fprintf(bw, "w%d", word)
			prev = word
		}
		bw.WriteByte('\n')
	}
	return bw.Flush()
}
