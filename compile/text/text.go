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
type Error struct {
	File string
	Line int
	Msg  string
}

func (e *Error) Error() string { return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg) }

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
			return &Error{name, n, "invalid UTF-8"}
		}
		toks = appendFields(toks[:0], string(b))
		if len(toks) == 0 {
			return nil
		}
		if !allowMarkers {
			for _, t := range toks {
				if IsMarker(t) {
					return &Error{name, n, fmt.Sprintf("marker %s inside raw text", t)}
				}
			}
		}
		return fn(toks, n)
	})
	if err != nil {
		if _, ok := err.(*Error); ok {
			return err
		}
		return fmt.Errorf("%s: %w", name, err)
	}
	return nil
}

func appendFields(dst []string, s string) []string {
	return append(dst, strings.Fields(s)...)
}
