// Package vocab reads a fixed word list (a decoder's lexicon) and maps
// tokens onto it.
//
// With a list L the model's predictable vocabulary is exactly L plus </s>
// and <unk>; <s> stays a context word only. Every token that is not in L and
// is not a marker stands for <unk>, so the counts of n-grams that become
// equal are summed; a literal <unk> in the text is then a word outside the
// list like any other. Words of L that were never counted are still
// predictable: with count 0 they get probability only through the lower
// orders and the uniform level 0 (1/|V| over the new V).
//
// A list file is UTF-8, one word per line. Surrounding white space (a
// trailing carriage return, say) is ignored; an empty line, a line holding
// two words, and a word listed twice are errors naming the file and line.
// The markers may be listed: </s> and <unk> are always in V and <s> is
// always a context word, so listing them changes nothing.
package vocab

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"slices"
	"strings"
	"unicode/utf8"

	"ingot/compile/input"
	"ingot/compile/tables"
	"ingot/compile/text"
)

// List is a fixed word list.
type List struct {
	words []string        // sorted, markers excluded
	index map[string]bool // the same words
}

// Read reads a word list from r, reported as name in errors.
func Read(name string, r io.Reader) (*List, error) {
	l := &List{index: map[string]bool{}}
	first := map[string]int{}
	err := input.Lines(r, func(b []byte, n int) error {
		bad := func(format string, a ...any) error {
			return &text.Error{File: name, Line: n, Msg: fmt.Sprintf(format, a...)}
		}
		if !utf8.Valid(b) {
			return bad("invalid UTF-8")
		}
		fields := strings.Fields(string(b))
		switch {
		case len(fields) == 0:
			return bad("empty line (one word per line)")
		case len(fields) > 1:
			return bad("%d words on one line (one word per line)", len(fields))
		}
		w := fields[0]
		if at, ok := first[w]; ok {
			return bad("%q listed twice (first on line %d)", w, at)
		}
		first[w] = n
		if !text.IsMarker(w) {
			l.words = append(l.words, w)
			l.index[w] = true
		}
		return nil
	})
	if err != nil {
		return nil, input.Named(name, err)
	}
	if len(first) == 0 {
		return nil, fmt.Errorf("%s: no words in the word list", name)
	}
	slices.Sort(l.words)
	return l, nil
}

// Load reads the word list file at path (".gz" and ".zst" are decompressed).
func Load(path string) (*List, error) {
	r, err := input.Open(path)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	return Read(path, r)
}

// New returns the list of the given words (markers among them are ignored);
// a duplicate is an error.
func New(words []string) (*List, error) {
	l := &List{index: map[string]bool{}}
	for _, w := range words {
		if l.index[w] {
			return nil, fmt.Errorf("%q listed twice", w)
		}
		if !text.IsMarker(w) {
			l.words = append(l.words, w)
			l.index[w] = true
		}
	}
	slices.Sort(l.words)
	return l, nil
}

// Words returns the listed words, markers excluded, sorted bytewise. The
// slice is shared: do not change it.
func (l *List) Words() []string { return l.words }

// Digest returns the hex SHA-256 of the listed words, markers excluded, in
// byte order, each followed by a newline: two lists with the same words have
// the same digest, whatever their order in the file. Models record it so that
// a decoder's lexicon can be checked against the model's.
func (l *List) Digest() string {
	h := sha256.New()
	for _, w := range l.words {
		io.WriteString(h, w)
		io.WriteString(h, "\n")
	}
	return hex.EncodeToString(h.Sum(nil))
}

// Len returns the number of listed words, markers excluded.
func (l *List) Len() int { return len(l.words) }

// Has reports whether w is a listed word.
func (l *List) Has(w string) bool { return l.index[w] }

// Map returns the word that stands for token w: w itself when it is listed
// or is <s> or </s>, and <unk> otherwise (a literal <unk> included).
func (l *List) Map(w string) string {
	if l.index[w] || w == tables.SentenceStart || w == tables.SentenceEnd {
		return w
	}
	return tables.Unknown
}
