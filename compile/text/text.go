// Package text reads training and evaluation text: UTF-8, one sentence per
// line, tokens separated by runs of white space. Empty lines are skipped.
// Tokens are case-sensitive byte strings; nothing is normalised.
//
// In training text the markers <s>, </s> and <unk> are reserved: a marker
// found inside raw text is an input error naming the file and line.
package text

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"ingot/compile/input"
	"ingot/compile/tables"
)

// Error reports bad input with the file and line where it was found.
type Error = input.Error

// IsMarker reports whether tok is one of <s>, </s>, <unk>.
func IsMarker(tok string) bool {
	return tok == tables.SentenceStart || tok == tables.SentenceEnd || tok == tables.Unknown
}

// Sentences reads r (named name in errors) and calls fn with the tokens of
// every non-empty line and the line number. The token slice is reused
// between calls. With allowMarkers false, a marker token is an error.
func Sentences(name string, r io.Reader, allowMarkers bool, fn func(tokens []string, line int) error) error {
	var toks []string
	err := input.Lines(r, func(b []byte, n int) error {
		if !utf8.Valid(b) {
			return &Error{File: name, Line: n, Msg: "invalid UTF-8"}
		}
		toks = appendFields(toks[:0], string(b))
		if len(toks) == 0 {
			return nil
		}
		if !allowMarkers {
			for _, t := range toks {
				if IsMarker(t) {
					return &Error{File: name, Line: n, Msg: fmt.Sprintf("marker %s inside raw text", t)}
				}
			}
		}
		return fn(toks, n)
	})
	return input.Named(name, err)
}

func appendFields(dst []string, s string) []string {
	return append(dst, strings.Fields(s)...)
}

// HeldOut reads held-out text (text to score or to measure perplexity on)
// exactly as training text is read: a marker inside it is an error naming
// the file and line, as count reports it. Text without a sentence is an
// error too, the same one everywhere, rather than a perplexity of NaN.
func HeldOut(name string, r io.Reader, fn func(tokens []string, line int) error) error {
	seen := false
	err := Sentences(name, r, false, func(toks []string, line int) error {
		seen = true
		return fn(toks, line)
	})
	if err == nil && !seen {
		err = NoSentences(name)
	}
	return err
}

// NoSentences is the error for text that holds no sentence.
func NoSentences(name string) error { return fmt.Errorf("no sentences in %s", name) }
