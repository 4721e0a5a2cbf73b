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
	if err := checkWritable(t); err != nil {
		return nil, err
	}
	sections, err := buildSections3(t)
	if err != nil {
		return nil, err
	}
	for i := range sections {
		s := &sections[i]
		if s.Kind != KindWordHash {
			continue
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
	}
	var b bytes.Buffer
	if err := writeFile(&b, assemble(sections, 3), sections); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}
