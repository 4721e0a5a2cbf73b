package format

import (
	"encoding/binary"
	"fmt"
	"math"
	"slices"
	"strings"

	"ingot/compile/tables"
)

// Model is a model file opened for queries. Its methods read the file's
// bytes in place; none of them panics, whatever the bytes hold. A Model is
// safe for concurrent use by several goroutines, except Close.
type Model struct {
	data     []byte
	release  func() error // unmaps the file; nil when data is not mapped
	path     string
	version  int
	sections []Section

	order     int
	vocabSize int
	start     uint32
	end       uint32
	unknown   uint32
	flags     uint32
	counts    [tables.MaxOrder]int
	digest    [32]byte
	info      tables.Info

	wordStarts   []byte    // plain word starts
	wordStartsEF eliasFano // version 3: Elias-Fano word starts
	startsCoded  bool      // the word starts are wordStartsEF
	wordText     []byte
	wordHash     *wordHashTable // version 3
	levels       [tables.MaxOrder]level
	decoded      *decodedTrie // version 3: plain child starts and last words, decoded on first use
	links        *suffixTable // every entry's suffix link, found on first use (SuffixLink)
}

// level holds the columns of one order, as slices of the file's bytes.
type level struct {
	lastWords []byte // order >= 2: n uint32
	probs     column // n log10 probabilities
	backoffs  column // orders below the top: n log10 back-off weights
	starts    []byte // orders below the top: n+1 uint32

	// Version 3.
	childStarts eliasFano // orders below the top: n+1 child starts
	keys        eliasFano // orders >= 2: last-word keys, shifted per sibling list
	lists       keyLists  // orders >= 2: the keys in sibling lists (ListIDs, ListRanks, CodedListIDs, CodedListRanks)
	listed      bool      // the keys are in lists, not in keys
	coded       bool      // the lists are coded lists (CodedListIDs, CodedListRanks)
	ranked      bool      // keys are successor ranks (EliasFanoRanks, ListRanks, CodedListRanks)
	marks       marks     // orders below the top: entries with a back-off weight
}

// Close releases the file mapping. After Close the Model answers every query
// as an empty model would (no words, no entries); it must not be closed while
// other goroutines use it.
func (m *Model) Close() error {
	release := m.release
	*m = Model{}
	if release != nil {
		if err := release(); err != nil {
			return fmt.Errorf("unmapping the model: %w", err)
		}
	}
	return nil
}

// FromBytes opens a model held in data, with the same checks as Open. The
// Model reads data in place: the caller must not change it afterwards.
func FromBytes(data []byte) (*Model, error) {
	m := &Model{data: data, links: &suffixTable{}}
	if err := m.readHeader(); err != nil {
		return nil, err
	}
	if err := m.readSummary(); err != nil {
		return nil, err
	}
	if err := m.readBuildInfo(); err != nil {
		return nil, err
	}
	if err := m.readVocabulary(); err != nil {
		return nil, err
	}
	if m.version >= 3 {
		err := m.readLevels3()
		if err != nil {
			return nil, err
		}
		m.decoded = &decodedTrie{}
		return m, nil
	}
	if err := m.readLevels(); err != nil {
		return nil, err
	}
	return m, nil
}

func u32(b []byte) uint32 { return binary.LittleEndian.Uint32(b) }
func u64(b []byte) uint64 { return binary.LittleEndian.Uint64(b) }

// readHeader reads the header and the directory with the one parser
// (scanContainer), stopping at the first problem, and records the
// sections.
func (m *Model) readHeader() error {
	var first *FormatError
	stop := func(p Problem) bool {
		first = &FormatError{Section: p.Section, Offset: p.Offset, Msg: p.Msg}
		return false
	}
	c, readable, err := scanContainer(m.data, stop)
	if err != nil {
		return err
	}
	if first == nil && readable {
		c.checkDirectory(stop)
	}
	if first != nil {
		return first
	}
	m.version = c.Version
	copy(m.digest[:], m.data[offDigest:offDigest+32])
	m.sections = make([]Section, len(c.Entries))
	for i, e := range c.Entries {
		m.sections[i] = e.Section
	}
	return nil
}

// find returns the section of kind k and order n; duplicates are an error.
func (m *Model) find(kind SectionKind, order int) (Section, bool, error) {
	var found Section
	ok := false
	for _, s := range m.sections {
		if s.Kind != kind || s.Order != order {
			continue
		}
		if ok {
			return s, false, formatErr(s.Name(), s.Offset, "section appears twice in the directory")
		}
		found, ok = s, true
	}
	return found, ok, nil
}

// need returns the bytes of a required plain section whose length must be
// wantLen (or any length when wantLen < 0).
func (m *Model) need(kind SectionKind, order int, wantLen int64) (Section, []byte, error) {
	return m.needEncoded(kind, order, wantLen, Plain)
}

// needEncoded is need for a section that must have one of the encodings
// given.
func (m *Model) needEncoded(kind SectionKind, order int, wantLen int64, encodings ...Encoding) (Section, []byte, error) {
	s, ok, err := m.find(kind, order)
	if err != nil {
		return s, nil, err
	}
	if !ok {
		name := Section{Kind: kind, Order: order}.Name()
		return s, nil, formatErr(name, headerSize, "required section is missing from the directory")
	}
	if !slices.Contains(encodings, s.Encoding) {
		return s, nil, formatErr(s.Name(), s.Offset, "section has %s; only %s is allowed here", s.Encoding, encodingList(encodings))
	}
	if wantLen >= 0 && s.Length != wantLen {
		return s, nil, formatErr(s.Name(), s.Offset, "section is %d bytes, expected %d for the counts in the summary", s.Length, wantLen)
	}
	return s, m.data[s.Offset : s.Offset+s.Length : s.Offset+s.Length], nil
}

// needChecked is need plus a check of the section's CRC-32C, for the small
// sections whose every byte is read at open. A section longer than maxLen
// is refused before its checksum is computed.
func (m *Model) needChecked(kind SectionKind, order int, maxLen int64) ([]byte, error) {
	s, b, err := m.need(kind, order, -1)
	if err != nil {
		return nil, err
	}
	if s.Length > maxLen {
		return nil, formatErr(s.Name(), s.Offset, "section is %d bytes; at most %d are allowed", s.Length, maxLen)
	}
	if got := checksum(b); got != s.Checksum {
		return nil, formatErr(s.Name(), s.Offset, "checksum is %08x, expected %08x: section damaged", got, s.Checksum)
	}
	return b, nil
}

func (m *Model) readSummary() error {
	b, err := m.needChecked(KindSummary, 0, summaryFixedSize+8*tables.MaxOrder)
	if err != nil {
		return err
	}
	s, _, _ := m.find(KindSummary, 0)
	if len(b) < summaryFixedSize+8 {
		return formatErr("summary", s.Offset, "section is %d bytes, shorter than the %d bytes of a model of order 1", len(b), summaryFixedSize+8)
	}
	order := u32(b)
	if order < 1 || order > tables.MaxOrder {
		return formatErr("summary", s.Offset, "order %d outside 1..%d", order, tables.MaxOrder)
	}
	if want := summaryFixedSize + 8*int(order); len(b) != want {
		return formatErr("summary", s.Offset, "section is %d bytes, expected %d for a model of order %d", len(b), want, order)
	}
	m.order = int(order)
	vocab := u32(b[4:])
	if vocab == noNode {
		return formatErr("summary", s.Offset+4, "vocabulary size %d is reserved", vocab)
	}
	m.vocabSize = int(vocab)
	m.start, m.end, m.unknown = u32(b[8:]), u32(b[12:]), u32(b[16:])
	for i, id := range []uint32{m.start, m.end, m.unknown} {
		if uint64(id) >= uint64(vocab) {
			return formatErr("summary", s.Offset+8+4*int64(i), "marker id %d outside the vocabulary of %d words", id, vocab)
		}
	}
	m.flags = u32(b[20:])
	for k := 1; k <= m.order; k++ {
		at := summaryFixedSize + 8*(k-1)
		c := u64(b[at:])
		if c > math.MaxUint32 || c > uint64(len(m.data)) {
			return formatErr("summary", s.Offset+int64(at), "order %d count %d is impossible for a %d-byte file", k, c, len(m.data))
		}
		m.counts[k-1] = int(c)
	}
	if m.counts[0] != m.vocabSize {
		return formatErr("summary", s.Offset+summaryFixedSize, "%d unigrams for a vocabulary of %d words; order 1 must hold every word", m.counts[0], m.vocabSize)
	}
	return nil
}

func (m *Model) readBuildInfo() error {
	// The size cap comes before the checksum, so that an oversized section
	// costs no time to refuse.
	s, b, err := m.need(KindBuildInfo, 0, -1)
	if err != nil {
		return err
	}
	if len(b) > MaxBuildInfo {
		return formatErr("build info", s.Offset, "section is %d bytes; at most %d are allowed", len(b), MaxBuildInfo)
	}
	if got := checksum(b); got != s.Checksum {
		return formatErr(s.Name(), s.Offset, "checksum is %08x, expected %08x: section damaged", got, s.Checksum)
	}
	info, err := unmarshalInfo(b)
	if err != nil {
		s, _, _ := m.find(KindBuildInfo, 0)
		return formatErr("build info", s.Offset, "not valid JSON build information: %v", err)
	}
	m.info = info
	return nil
}

func (m *Model) readVocabulary() error {
	encodings := []Encoding{Plain}
	if m.version >= 3 {
		encodings = append(encodings, EliasFano)
	}
	s, starts, err := m.needEncoded(KindWordStarts, 0, -1, encodings...)
	if err != nil {
		return err
	}
	t, text, err := m.need(KindWordText, 0, -1)
	if err != nil {
		return err
	}
	m.wordText = text
	if s.Encoding == EliasFano {
		if m.wordStartsEF, err = parseEliasFano(starts, uint64(m.vocabSize)+1); err != nil {
			return formatErr(s.Name(), s.Offset, "%v", err)
		}
		m.startsCoded = true
		if first, ok := m.wordStartsEF.get(0); !ok || first != 0 {
			return formatErr(s.Name(), s.Offset, "first word starts at %d, expected 0", first)
		}
		if last := m.wordStartsEF.last; last != uint64(t.Length) {
			return formatErr(s.Name(), s.Offset, "words end at %d but the word text is %d bytes", last, t.Length)
		}
	} else {
		if want := 4 * (int64(m.vocabSize) + 1); s.Length != want {
			return formatErr(s.Name(), s.Offset, "section is %d bytes, expected %d for the counts in the summary", s.Length, want)
		}
		if first := u32(starts); first != 0 {
			return formatErr(s.Name(), s.Offset, "first word starts at %d, expected 0", first)
		}
		if last := u32(starts[4*m.vocabSize:]); uint64(last) != uint64(t.Length) {
			return formatErr(s.Name(), s.Offset+4*int64(m.vocabSize), "words end at %d but the word text is %d bytes", last, t.Length)
		}
		m.wordStarts = starts
	}
	for _, marker := range []struct {
		id   uint32
		word string
	}{{m.start, tables.SentenceStart}, {m.end, tables.SentenceEnd}, {m.unknown, tables.Unknown}} {
		if w := m.Word(marker.id); w != marker.word {
			return formatErr(s.Name(), s.Offset+4*int64(marker.id), "word id %d is %q, but the summary names it %s", marker.id, w, marker.word)
		}
	}
	return nil
}

func (m *Model) readLevels() error {
	for k := 1; k <= m.order; k++ {
		n := int64(m.counts[k-1])
		lv := &m.levels[k-1]
		var err error
		if k >= 2 {
			if _, lv.lastWords, err = m.need(KindLastWords, k, 4*n); err != nil {
				return err
			}
		}
		if lv.probs, err = m.readColumn(KindProbabilities, KindProbCodebook, k, n); err != nil {
			return err
		}
		if k == m.order {
			break
		}
		if lv.backoffs, err = m.readColumn(KindBackoffs, KindBackoffCodebook, k, n); err != nil {
			return err
		}
		var s Section
		if s, lv.starts, err = m.need(KindChildStarts, k, 4*(n+1)); err != nil {
			return err
		}
		if first := u32(lv.starts); first != 0 {
			return formatErr(s.Name(), s.Offset, "first child start is %d, expected 0", first)
		}
		if last := u32(lv.starts[4*n:]); uint64(last) != uint64(m.counts[k]) {
			return formatErr(s.Name(), s.Offset+4*n, "last child start is %d, expected the %d entries of order %d", last, m.counts[k], k+1)
		}
	}
	for _, s := range m.sections {
		if !m.expected(s) {
			return formatErr(s.Name(), s.Offset, "section has no place in a model of order %d", m.order)
		}
	}
	return nil
}

// readColumn finds the probabilities or back-off weights of order k: plain
// float32 values, or (version 2) packed indexes with their codebook, whose
// small codebook is checksummed at open.
func (m *Model) readColumn(kind, codebookKind SectionKind, k int, n int64) (column, error) {
	s, ok, err := m.find(kind, k)
	if err != nil {
		return column{}, err
	}
	if !ok || s.Encoding == Plain {
		if cb, has, _ := m.find(codebookKind, k); has {
			return column{}, formatErr(cb.Name(), cb.Offset, "codebook for a column that is not quantized")
		}
		_, b, err := m.need(kind, k, 4*n)
		return column{plain: b, n: int(n)}, err
	}
	if s.Encoding != Packed && s.Encoding != Tiered {
		return column{}, formatErr(s.Name(), s.Offset, "section has %s; this reader knows %s, %s and %s", s.Encoding, Plain, Packed, Tiered)
	}
	if m.version < 2 || (s.Encoding == Tiered && m.version < 3) {
		return column{}, formatErr(s.Name(), s.Offset, "section has %s, which format version %d does not allow", s.Encoding, m.version)
	}
	cb, err := m.needChecked(codebookKind, k, 4<<16)
	if err != nil {
		return column{}, err
	}
	cs, _, _ := m.find(codebookKind, k)
	levels := len(cb) / 4
	if len(cb)%4 != 0 || levels < 1 || levels > 1<<16 {
		return column{}, formatErr(cs.Name(), cs.Offset, "codebook is %d bytes; expected 1 to 65536 float32 values", len(cb))
	}
	b := m.data[s.Offset : s.Offset+s.Length : s.Offset+s.Length]
	if s.Encoding == Tiered {
		narrow, t, err := parseTiers(b, n, levels)
		if err != nil {
			return column{}, formatErr(s.Name(), s.Offset, "%v", err)
		}
		return column{packed: narrow, bits: bitsFor(levels), codebook: cb, n: int(n), tier: t}, nil
	}
	if len(b) < packedHeader {
		return column{}, formatErr(s.Name(), s.Offset, "section is %d bytes, shorter than its %d-byte header", len(b), packedHeader)
	}
	width := u32(b)
	if width != uint32(bitsFor(levels)) {
		return column{}, formatErr(s.Name(), s.Offset, "indexes are %d bits wide; a codebook of %d values needs %d", width, levels, bitsFor(levels))
	}
	if want := packedLen(int(n), uint(width)); s.Length != want {
		return column{}, formatErr(s.Name(), s.Offset, "section is %d bytes, expected %d for %d indexes of %d bits", s.Length, want, n, width)
	}
	return column{packed: b[packedHeader:], bits: uint(width), codebook: cb, n: int(n)}, nil
}

// expected reports whether a section of a known kind fits this model's
// order. Sections of unknown kinds are left alone.
func (m *Model) expected(s Section) bool {
	switch s.Kind {
	case KindSummary, KindBuildInfo, KindWordStarts, KindWordText, KindSignature:
		return s.Order == 0
	case KindLastWords:
		return s.Order >= 2 && s.Order <= m.order
	case KindProbabilities:
		return s.Order >= 1 && s.Order <= m.order
	case KindBackoffs, KindChildStarts, KindBackoffCodebook:
		return s.Order >= 1 && s.Order < m.order
	case KindProbCodebook:
		return s.Order >= 1 && s.Order <= m.order
	case KindContexts:
		return m.version >= 3 && s.Order >= 1 && s.Order < m.order
	case KindWordHash:
		return m.version >= 3 && s.Order == 0
	}
	return true
}

// encodingList names encodings for messages: "plain", "plain or Elias-Fano".
func encodingList(encodings []Encoding) string {
	names := make([]string, len(encodings))
	for i, e := range encodings {
		names[i] = e.String()
	}
	return strings.Join(names, " or ")
}
