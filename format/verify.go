package format

import "crypto/sha256"

// Verify checks every byte of the model: the checksums and digest (see
// VerifyChecksums), then the structure that Open takes on trust: the
// vocabulary is valid UTF-8 and strictly sorted, child starts ascend, word
// ids lie inside the vocabulary and ascend under each parent, no stored
// value is NaN or +Inf, codebooks ascend strictly, and a model flagged
// suffix-closed is (the rules of CheckStructure, stopping at the first
// defect). It takes time linear in the size of the model (the suffix-closed
// check adds a search per entry).
func (m *Model) Verify() error {
	if err := m.VerifyChecksums(); err != nil {
		return err
	}
	var first *FormatError
	m.CheckStructure(func(_ Rule, p Problem) bool {
		first = &FormatError{Section: p.Section, Offset: p.Offset, Msg: p.Msg}
		return false
	})
	if first != nil {
		return m.withPath(first)
	}
	return nil
}

// VerifyChecksums checks the CRC-32C of every section, the SHA-256 content
// digest, and that the padding and reserved header bytes are zero: the
// container checks ingot verify makes (see Container), stopping at the
// first problem.
func (m *Model) VerifyChecksums() error {
	if len(m.data) < headerSize {
		return m.withPath(formatErr("header", 0, "model is closed or empty"))
	}
	var first *FormatError
	keep := func(p Problem) {
		if first == nil {
			first = &FormatError{Section: p.Section, Offset: p.Offset, Msg: p.Msg}
		}
	}
	c, readable, err := scanContainer(m.data, func(p Problem) bool { keep(p); return false })
	if err != nil {
		return m.withPath(err)
	}
	if readable && first == nil {
		c.checkDirectory(func(p Problem) bool { keep(p); return false })
	}
	for _, check := range []func(report func(Problem)){
		c.CheckReserved,
		func(r func(Problem)) { c.CheckChecksums(r) },
		c.CheckPadding,
		func(r func(Problem)) { c.CheckDigest(r) },
	} {
		if first != nil {
			return m.withPath(first)
		}
		check(keep)
	}
	if first != nil {
		return m.withPath(first)
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
