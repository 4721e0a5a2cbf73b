package counts

import (
	"bytes"
	"errors"
	"fmt"
	"hash/maphash"
	"unicode"
	"unicode/utf8"

	"ingot/compile/input"
	"ingot/compile/tables"
	"ingot/compile/text"
	"ingot/compile/vocab"
)

// interner interns the tokens of training text: the bytes of a token map to
// a word id through an open-addressing hash table (linear probing) of its
// own, so that a token seen before costs one hash of its bytes and, mostly,
// one comparison, and no string is made for it. A token is turned into a
// string once, when first seen.
type interner struct {
	list  *vocab.List // nil: every token is its own word
	seed  maphash.Seed
	slots []uint32 // token + 1, 0 when empty; at most half full
	toks  []string // distinct tokens as read, in order of first sight
	hash  []uint64 // hash of each token
	id    []uint32 // word id of each token
	ids   map[string]uint32
	words []string // id -> word (with a list, tokens outside it share <unk>)
}

func newInterner(list *vocab.List) *interner {
	w := &interner{list: list, seed: maphash.MakeSeed(), slots: make([]uint32, 1<<10), ids: map[string]uint32{}}
	for _, m := range []string{tables.SentenceStart, tables.SentenceEnd, tables.Unknown} {
		w.wordID(m)
	}
	return w
}

// wordID returns the id of word, adding it if new.
func (w *interner) wordID(word string) uint32 {
	if id, ok := w.ids[word]; ok {
		return id
	}
	id := uint32(len(w.words))
	w.ids[word] = id
	w.words = append(w.words, word)
	return id
}

// lookup returns the word id of the token b.
func (w *interner) lookup(b []byte) uint32 {
	h := maphash.Bytes(w.seed, b)
	mask := len(w.slots) - 1
	for i := int(h) & mask; ; i = (i + 1) & mask {
		t := w.slots[i]
		if t == 0 {
			return w.insert(b, h, i)
		}
		if w.hash[t-1] == h && w.toks[t-1] == string(b) {
			return w.id[t-1]
		}
	}
}

func (w *interner) insert(b []byte, h uint64, i int) uint32 {
	tok := string(b)
	word := tok
	if w.list != nil {
		word = w.list.Map(tok)
	}
	id := w.wordID(word)
	w.toks = append(w.toks, tok)
	w.hash = append(w.hash, h)
	w.id = append(w.id, id)
	w.slots[i] = uint32(len(w.toks))
	if 2*len(w.toks) > len(w.slots) {
		w.slots = make([]uint32, 2*len(w.slots))
		mask := len(w.slots) - 1
		for t, h := range w.hash {
			j := int(h) & mask
			for w.slots[j] != 0 {
				j = (j + 1) & mask
			}
			w.slots[j] = uint32(t + 1)
		}
	}
	return id
}

var asciiSpace = [128]bool{'\t': true, '\n': true, '\v': true, '\f': true, '\r': true, ' ': true}

// markerIn reports whether the token b is a marker refused in raw text:
// any of the three, or, with a word list (which maps a literal <unk> onto
// itself as a word outside the list), <s> and </s> only.
func markerIn(b []byte, withList bool) bool {
	if len(b) < 3 || len(b) > 5 || b[0] != '<' {
		return false
	}
	s := string(b) // no allocation: compared only
	return s == tables.SentenceStart || s == tables.SentenceEnd || !withList && s == tables.Unknown
}

// appendSentence appends to s the word ids of the tokens of line (one line
// of training text, number n), split and checked as text.Sentences splits
// and checks it: tokens are separated by runs of Unicode white space, and
// invalid UTF-8 or a marker inside the text is an error naming the line.
func (w *interner) appendSentence(s []uint32, line []byte, n int) ([]uint32, error) {
	if !utf8.Valid(line) {
		return s, &text.Error{Line: n, Msg: "invalid UTF-8"}
	}
	withList := w.list != nil
	for i := 0; i < len(line); {
		// Skip white space.
		if c := line[i]; c < utf8.RuneSelf {
			if asciiSpace[c] {
				i++
				continue
			}
		} else if r, size := utf8.DecodeRune(line[i:]); unicode.IsSpace(r) {
			i += size
			continue
		}
		j := i
		for j < len(line) {
			if c := line[j]; c < utf8.RuneSelf {
				if asciiSpace[c] {
					break
				}
				j++
			} else {
				r, size := utf8.DecodeRune(line[j:])
				if unicode.IsSpace(r) {
					break
				}
				j += size
			}
		}
		tok := line[i:j]
		if markerIn(tok, withList) {
			return s, &text.Error{Line: n, Msg: fmt.Sprintf("marker %s inside raw text", tok)}
		}
		s = append(s, w.lookup(tok))
		i = j
	}
	return s, nil
}

var byteOrderMark = []byte{0xef, 0xbb, 0xbf}

// eachLine calls fn with every line of c and its number within c (1 for
// the first), as input.Lines reads them (with the same errors), except that
// only the first chunk of an input may start with a byte-order mark. An
// error naming a line is shifted to the line's number in the input.
func eachLine(c chunk, fn func(line []byte, n int) error) error {
	var err error
	if c.line > 1 && bytes.HasPrefix(c.data, byteOrderMark) {
		err = &text.Error{Line: 1, Msg: "byte-order mark (U+FEFF) inside the text: only one at the very start of a file is skipped"}
	} else {
		err = input.Lines(bytes.NewReader(c.data), fn)
	}
	var te *text.Error
	if errors.As(err, &te) {
		te.Line += c.line - 1
	}
	return input.Named(c.name, err)
}
