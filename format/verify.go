package format

import (
	"bytes"
	"crypto/sha256"
	"math"
	"unicode/utf8"
)

// Verify checks every byte of the model: the checksums and digest (see
// VerifyChecksums), then the structure that Open takes on trust: the
// vocabulary is valid UTF-8 and strictly sorted, child starts ascend, word
// ids lie inside the vocabulary and ascend under each parent, no stored
// value is NaN or +Inf, codebooks ascend strictly, and a model flagged
// suffix-closed is. It takes time linear in the size of the model (the
// suffix-closed check adds a search per entry).
func (m *Model) Verify() error {
	if err := m.VerifyChecksums(); err != nil {
		return err
	}
	if err := m.verifyVocabulary(); err != nil {
		return m.withPath(err)
	}
	if m.version >= 3 {
		if err := m.checkWordHash(); err != nil {
			return m.withPath(err)
		}
		if err := m.decodeErr(); err != nil {
			return err
		}
	}
	for k := 1; k <= m.order; k++ {
		if err := m.verifyOrder(k); err != nil {
			return m.withPath(err)
		}
	}
	if m.SuffixClosed() {
		if err := m.verifySuffixClosed(); err != nil {
			return m.withPath(err)
		}
	}
	return nil
}

// VerifyChecksums checks the CRC-32C of every section, the SHA-256 content
// digest, and that the padding and reserved header bytes are zero.
func (m *Model) VerifyChecksums() error {
	if len(m.data) < headerSize {
		return m.withPath(formatErr("header", 0, "model is closed or empty"))
	}
	if r := u32(m.data[offReserved:]); r != 0 {
		return m.withPath(formatErr("header", offReserved, "reserved field is %08x, expected 0", r))
	}
	digest := sha256.New()
	pos := int64(headerSize + directoryEntry*len(m.sections))
	for _, s := range m.sections {
		if err := zeros(m.data[pos:s.Offset], "padding before "+s.Name(), pos); err != nil {
			return m.withPath(err)
		}
		b := m.data[s.Offset : s.Offset+s.Length]
		if got := checksum(b); got != s.Checksum {
			return m.withPath(formatErr(s.Name(), s.Offset, "checksum is %08x, expected %08x: section damaged", got, s.Checksum))
		}
		if s.Kind != KindSignature {
			digest.Write(digestRecord(s))
			digest.Write(b)
		}
		pos = s.Offset + s.Length
	}
	if err := zeros(m.data[pos:], "padding at the end of the file", pos); err != nil {
		return m.withPath(err)
	}
	if int64(len(m.data))-pos >= sectionAlignment {
		return m.withPath(formatErr("end of file", pos, "%d bytes follow the last section; at most %d bytes of padding may", int64(len(m.data))-pos, sectionAlignment-1))
	}
	var sum [32]byte
	digest.Sum(sum[:0])
	if sum != m.digest {
		return m.withPath(formatErr("header", offDigest, "content digest is %x, expected %x", sum, m.digest))
	}
	return nil
}

func zeros(b []byte, what string, at int64) error {
	for i, c := range b {
		if c != 0 {
			return formatErr(what, at+int64(i), "byte is %#02x, expected 0", c)
		}
	}
	return nil
}

// withPath fills in the file name of a FormatError.
func (m *Model) withPath(err error) error {
	if fe, ok := err.(*FormatError); ok && fe.Path == "" {
		fe.Path = m.path
	}
	return err
}

// sectionOffset returns the file offset of byte at within the section of the
// given kind and order, for error messages.
func (m *Model) sectionOffset(kind SectionKind, order int, at int) (string, int64) {
	for _, s := range m.sections {
		if s.Kind == kind && s.Order == order {
			return s.Name(), s.Offset + int64(at)
		}
	}
	return Section{Kind: kind, Order: order}.Name(), 0
}

func (m *Model) verifyVocabulary() error {
	var prev []byte
	for id := 0; id < m.vocabSize; id++ {
		a, b := u32(m.wordStarts[4*id:]), u32(m.wordStarts[4*id+4:])
		if a > b || uint64(b) > uint64(len(m.wordText)) {
			name, at := m.sectionOffset(KindWordStarts, 0, 4*id)
			return formatErr(name, at, "word id %d spans [%d, %d), outside the %d bytes of word text", id, a, b, len(m.wordText))
		}
		w := m.wordText[a:b]
		if !utf8.Valid(w) {
			name, at := m.sectionOffset(KindWordText, 0, int(a))
			return formatErr(name, at, "word id %d is not valid UTF-8", id)
		}
		if id > 0 && bytes.Compare(prev, w) >= 0 {
			name, at := m.sectionOffset(KindWordText, 0, int(a))
			return formatErr(name, at, "word id %d (%q) does not sort after word id %d (%q)", id, w, id-1, prev)
		}
		prev = w
	}
	return nil
}

func (m *Model) verifyOrder(k int) error {
	n := m.Count(k)
	lv := &m.levels[k-1]
	if err := m.verifyCodebook(KindProbCodebook, k, &lv.probs); err != nil {
		return err
	}
	if err := m.verifyCodebook(KindBackoffCodebook, k, &lv.backoffs); err != nil {
		return err
	}
	for i := 0; i < n; i++ {
		if p := float64(lv.probs.at(i)); math.IsNaN(p) || math.IsInf(p, 1) {
			name, at := m.sectionOffset(KindProbabilities, k, 4*i)
			return formatErr(name, at, "entry %d has log10 probability %v", i, p)
		}
	}
	if k == m.order {
		return nil
	}
	for i := 0; i < lv.backoffs.n; i++ {
		if b := float64(lv.backoffs.at(i)); math.IsNaN(b) || math.IsInf(b, 1) {
			name, at := m.sectionOffset(KindBackoffs, k, 4*i)
			return formatErr(name, at, "entry %d has log10 back-off %v", i, b)
		}
	}
	starts, _, err := m.trie(k)
	if err != nil {
		return err
	}
	_, words, err := m.trie(k + 1)
	if err != nil {
		return err
	}
	for i := 0; i < n; i++ {
		a, b := u32(starts[4*i:]), u32(starts[4*i+4:])
		if a > b {
			name, at := m.sectionOffset(KindChildStarts, k, 4*i+4)
			return formatErr(name, at, "child start %d of entry %d is below the previous one, %d", b, i+1, a)
		}
	}
	// Open checked that the last start is the number of entries of order
	// k+1, so ascending starts stay inside the last-words column.
	for i := 0; i < n; i++ {
		a, b := u32(starts[4*i:]), u32(starts[4*i+4:])
		for c := a; c < b; c++ {
			id := u32(words[4*c:])
			if uint64(id) >= uint64(m.vocabSize) {
				name, at := m.sectionOffset(KindLastWords, k+1, 4*int(c))
				return formatErr(name, at, "entry %d holds word id %d, outside the vocabulary of %d words", c, id, m.vocabSize)
			}
			if c > a && u32(words[4*c-4:]) >= id {
				name, at := m.sectionOffset(KindLastWords, k+1, 4*int(c))
				return formatErr(name, at, "entry %d (word id %d) does not ascend after its sibling", c, id)
			}
		}
	}
	return nil
}

// verifyCodebook checks the codebook of a quantized column: no NaN level,
// levels strictly ascending (spec/FORMAT.md §4, kinds 10 and 11). Open
// checks only its length; a plain column has none.
func (m *Model) verifyCodebook(kind SectionKind, k int, c *column) error {
	levels := len(c.codebook) / 4
	for j := 0; j < levels; j++ {
		x := floatAt(c.codebook, j)
		if math.IsNaN(float64(x)) || j > 0 && !(floatAt(c.codebook, j-1) < x) {
			name, at := m.sectionOffset(kind, k, 4*j)
			return formatErr(name, at, "codebook value %d (%v) is NaN or does not ascend after the one before", j, x)
		}
	}
	return nil
}

func (m *Model) verifySuffixClosed() error {
	for k := 2; k <= m.order; k++ {
		it := m.Entries(k)
		for it.Next() {
			if _, ok := m.Find(it.Gram()[1:]); !ok {
				name, at := m.sectionOffset(KindSummary, 0, 20)
				return formatErr(name, at, "model is flagged suffix-closed, but the suffix of order-%d entry %d (%v) is not stored", k, it.Index(), it.Gram())
			}
		}
		if err := it.Err(); err != nil {
			return err
		}
	}
	return nil
}

// label names the model in messages that are not FormatErrors.
func (m *Model) label() string {
	if m.path == "" {
		return "model"
	}
	return m.path
}

// contentDigest computes the SHA-256 content digest of the sections.
func contentDigest(m *Model) [32]byte {
	h := sha256.New()
	for _, s := range m.sections {
		if s.Kind != KindSignature {
			h.Write(digestRecord(s))
			h.Write(m.data[s.Offset : s.Offset+s.Length])
		}
	}
	var sum [32]byte
	h.Sum(sum[:0])
	return sum
}
