package counts

import (
	"fmt"
	"io"

	"ingot/compile/tables"
	"ingot/compile/text"
	"ingot/compile/vocab"
)

// Sentences reads the training sentences of r, reported as name in errors,
// exactly as counting reads them, and calls fn with each sentence's tokens
// (without markers). With a word list l, every token is first mapped onto
// it (l.Map): a literal <unk> is then an ordinary word outside the list,
// while <s> and </s> stay errors. Invalid UTF-8 or a marker inside the text
// is an error naming the file and line.
//
// Counting in another engine (a distributed pipeline, say) calls Sentences
// and EachGram so that its counts are those of 'ingot count'.
func Sentences(name string, r io.Reader, l *vocab.List, fn func(toks []string) error) error {
	return text.Sentences(name, r, l != nil, func(toks []string, line int) error {
		if l != nil {
			for i, t := range toks {
				if t == tables.SentenceStart || t == tables.SentenceEnd {
					return &text.Error{File: name, Line: line, Msg: fmt.Sprintf("marker %s inside raw text", t)}
				}
				toks[i] = l.Map(t)
			}
		}
		return fn(toks)
	})
}

// EachGram calls fn with every n-gram of orders 1..order that counting takes
// from one sentence: the tokens are padded as <s> t1 .. tm </s> and, for each
// predicted position (t1 .. tm and </s>) and each order whose span fits
// inside the padded sentence, the n-gram ending there is passed once. The
// slice passed to fn is valid only during the call.
func EachGram(order int, toks []string, fn func(gram []string)) {
	padded := make([]string, 0, len(toks)+2)
	padded = append(padded, tables.SentenceStart)
	padded = append(padded, toks...)
	padded = append(padded, tables.SentenceEnd)
	eachSpan(len(padded), order, func(lo, hi int) { fn(padded[lo:hi]) })
}

// eachSpan calls fn(lo, hi) for every counted span [lo, hi) of a padded
// sentence of n words (position 0 being <s>): the one rule of what counting
// counts, shared by the Counter and EachGram.
func eachSpan(n, order int, fn func(lo, hi int)) {
	for i := 1; i < n; i++ {
		for k := 1; k <= order && k <= i+1; k++ {
			fn(i+1-k, i+1)
		}
	}
}
