package format

import (
	"bytes"

	"ingot/compile/tables"
)

// StoresBackoff reports whether entry i of order k has a back-off weight
// stored: every entry of an order below the top in versions 1 and 2, the
// marked entries (contexts) in version 3. For the size benchmarks.
func StoresBackoff(m *Model, k, i int) bool {
	if k < 1 || k >= m.order {
		return false
	}
	if m.version < 3 {
		return true
	}
	marked, _ := m.levels[k-1].marks.rank(uint64(i))
	return marked
}

// MarshalWordHash is MarshalVersion(t, 3) with the word hash in encoding
// enc: Plain (32-bit slots), PackedIDs, or TaggedIDs with tag-bit
// fingerprints; the files older writers wrote, and the fingerprint widths
// BenchmarkID compares.
func MarshalWordHash(t *tables.Tables, enc Encoding, tag uint) ([]byte, error) {
	return marshalEdited(t, func(s *section) {
		if s.Kind != KindWordHash {
			return
		}
		s.Encoding = enc
		switch enc {
		case Plain:
			s.data = encodeWordHash(t.Vocab)
		case PackedIDs:
			s.data = encodePackedWordHash(t.Vocab, 0)
		default:
			s.data = encodePackedWordHash(t.Vocab, tag)
		}
	})
}

// marshalEdited writes t in version 3 as Marshal does, after edit has seen
// (and may have re-encoded) every section.
func marshalEdited(t *tables.Tables, edit func(s *section)) ([]byte, error) {
	if err := checkWritable(t); err != nil {
		return nil, err
	}
	sections, err := buildSections3(t)
	if err != nil {
		return nil, err
	}
	for i := range sections {
		edit(&sections[i])
	}
	var b bytes.Buffer
	if err := writeFile(&b, assemble(sections, 3), sections); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// MarshalPacked is MarshalVersion(t, 3) with every quantized column
// packed (encoding 1), none tiered: the file a writer without tiered
// columns writes, which BenchmarkTieredScoring scores against.
func MarshalPacked(t *tables.Tables) ([]byte, error) {
	return marshalEdited(t, func(s *section) {
		if s.Kind != KindProbabilities && s.Kind != KindBackoffs || s.Encoding != Tiered {
			return
		}
		lv := &t.Levels[s.Order-1]
		values, codebook := lv.LogProb, lv.ProbCodebook
		if s.Kind == KindBackoffs {
			// The stored weights: those of the contexts, as
			// orderSections3 keeps them.
			starts := linksOf(t).Starts[s.Order-1]
			codebook, values = lv.BackoffCodebook, nil
			for j, b := range lv.LogBackoff {
				if starts[j+1] > starts[j] || hasBackoff(b) {
					values = append(values, b)
				}
			}
		}
		s.data, s.Encoding = encodeColumn(values, codebook, false)
	})
}

// MarshalKeysEF is MarshalVersion(t, 3) with the last words of every order
// in one Elias-Fano sequence per order (encodings 2 and 3), as version-3
// files written before key lists hold them.
func MarshalKeysEF(t *tables.Tables) ([]byte, error) {
	links := linksOf(t)
	return marshalEdited(t, func(s *section) {
		if s.Kind != KindLastWords {
			return
		}
		s.data, s.Encoding = lastWordKeysEF(t, s.Order, links.Starts, links)
	})
}

// MarshalUncoded is MarshalVersion(t, 3) as the writer wrote it before
// coded key lists: each order's keys in one Elias-Fano sequence or in key
// lists, whichever is shorter (lists when equal). BenchmarkLayouts scores
// it beside the file the writer writes now.
func MarshalUncoded(t *tables.Tables) ([]byte, error) {
	links := linksOf(t)
	return marshalEdited(t, func(s *section) {
		if s.Kind != KindLastWords {
			return
		}
		k := s.Order
		keys, enc := wordKeys(t, k, links.Starts, links)
		starts, isContext := links.Starts[k-2], contextsOf(t, k-1, links.Starts)
		m, lists, _ := listTotals(keys, starts, isContext)
		if keyListsLength(m, lists) <= efLength(uint64(len(keys)), shiftedLast(keys, starts)) {
			s.data, s.Encoding = encodeKeyLists(keys, starts, isContext), listEncoding(enc)
			return
		}
		s.data, s.Encoding = encodeShifted(keys, starts), enc
	})
}
