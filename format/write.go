package format

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"sync"
	"unicode/utf8"
	"unsafe"

	"ingot/compile/tables"
)

// section is a section ready to be written.
type section struct {
	Section
	data []byte
}

// Write encodes t as a model file and writes it to w. The output depends
// only on t: writing the same Tables twice gives identical bytes.
//
// Write refuses Tables that break the conventions of package tables (see
// Tables.Check), that hold NaN or +Inf log10 values, words that are not
// valid UTF-8, or more entries than 32-bit ids and offsets can address.
func Write(w io.Writer, t *tables.Tables) error {
	return WriteVersion(w, t, Version)
}

// WriteVersion is Write in an older layout: version 1 or 2 (the tables
// layout; 1 is written when no column is quantized, 2 otherwise, whichever
// of the two is asked for) or 3. Tools that feed older readers use it.
func WriteVersion(w io.Writer, t *tables.Tables, version int) error {
	header, sections, err := encode(t, version)
	if err != nil {
		return err
	}
	return writeFile(w, header, sections)
}

// writeFile writes an assembled header and its sections with their padding.
func writeFile(w io.Writer, header []byte, sections []section) error {
	if _, err := w.Write(header); err != nil {
		return fmt.Errorf("writing the model header: %w", err)
	}
	var pad [sectionAlignment]byte
	pos := int64(len(header))
	for _, s := range sections {
		if _, err := w.Write(pad[:s.Offset-pos]); err != nil {
			return fmt.Errorf("writing the model: padding before %s: %w", s.Name(), err)
		}
		if _, err := w.Write(s.data); err != nil {
			return fmt.Errorf("writing the model: %s: %w", s.Name(), err)
		}
		pos = s.Offset + s.Length
	}
	if end := align(pos); end > pos {
		if _, err := w.Write(pad[:end-pos]); err != nil {
			return fmt.Errorf("writing the model: final padding: %w", err)
		}
	}
	return nil
}

// Marshal returns the model file for t as bytes; see Write.
func Marshal(t *tables.Tables) ([]byte, error) {
	return MarshalVersion(t, Version)
}

// MarshalVersion returns the model file for t in the given format version;
// see WriteVersion.
func MarshalVersion(t *tables.Tables, version int) ([]byte, error) {
	var b bytes.Buffer
	if err := WriteVersion(&b, t, version); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// encode builds the header with its directory, and the sections with their
// offsets, checksums and digest filled in.
func encode(t *tables.Tables, v int) ([]byte, []section, error) {
	if v < oldestVersion || v > Version {
		return nil, nil, fmt.Errorf("ingot model: cannot write format version %d; this writer writes %d to %d", v, oldestVersion, Version)
	}
	if err := checkWritable(t); err != nil {
		return nil, nil, err
	}
	if v == 3 {
		sections, err := buildSections3(t)
		if err != nil {
			return nil, nil, err
		}
		return assemble(sections, 3), sections, nil
	}
	sections, err := buildSections(t)
	if err != nil {
		return nil, nil, err
	}
	header := assemble(sections, version(t))
	return header, sections, nil
}

// assemble places the sections (offsets, lengths, checksums) and returns
// the header with its directory and the content digest, which covers every
// section but signatures.
func assemble(sections []section, version uint32) []byte {
	header := make([]byte, headerSize+directoryEntry*len(sections))
	pos := int64(len(header))
	digest := sha256.New()
	for i := range sections {
		s := &sections[i]
		s.Offset = align(pos)
		s.Length = int64(len(s.data))
		s.Checksum = checksum(s.data)
		pos = s.Offset + s.Length
		if s.Kind != KindSignature {
			digest.Write(digestRecord(s.Section))
			digest.Write(s.data)
		}
		e := header[headerSize+directoryEntry*i:]
		putU32(e[0:], uint32(s.Kind))
		putU32(e[4:], uint32(s.Encoding))
		putU32(e[8:], uint32(s.Order))
		putU32(e[12:], s.Checksum)
		putU64(e[16:], uint64(s.Offset))
		putU64(e[24:], uint64(s.Length))
	}
	copy(header, Magic)
	putU32(header[offVersion:], version)
	putU32(header[offSectionCount:], uint32(len(sections)))
	putU64(header[offFileLength:], uint64(align(pos)))
	copy(header[offDigest:], digest.Sum(nil))
	crc := updateChecksum(checksum(header[:offHeaderCRC]), header[headerSize:])
	putU32(header[offHeaderCRC:], crc)
	return header
}

// checkWritable checks what the file format needs beyond Tables.Check.
func checkWritable(t *tables.Tables) error {
	if t == nil {
		return fmt.Errorf("nothing to write: tables are nil")
	}
	if err := t.Check(); err != nil {
		return fmt.Errorf("cannot write the model: %w", err)
	}
	if uint64(len(t.Vocab)) >= uint64(noNode) {
		return fmt.Errorf("cannot write the model: vocabulary of %d words exceeds %d", len(t.Vocab), noNode-1)
	}
	text := 0
	for id, w := range t.Vocab {
		if !utf8.ValidString(w) {
			return fmt.Errorf("cannot write the model: word id %d (%q) is not valid UTF-8", id, w)
		}
		text += len(w)
	}
	if uint64(text) > math.MaxUint32 {
		return fmt.Errorf("cannot write the model: vocabulary text of %d bytes exceeds 4 GiB", text)
	}
	// The orders are checked on their own goroutines; the error of the
	// lowest order that has one is reported.
	errs := make([]error, t.Order())
	var wg sync.WaitGroup
	for k := 1; k <= t.Order(); k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[k-1] = checkWritableOrder(t, k)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// checkWritableOrder checks order k of tables that pass Check for
// checkWritable.
func checkWritableOrder(t *tables.Tables, k int) error {
	start, _ := t.ID(tables.SentenceStart)
	lv := &t.Levels[k-1]
	if uint64(len(lv.LogProb)) > math.MaxUint32 {
		return fmt.Errorf("cannot write the model: order %d has %d entries, more than 32-bit offsets address", k, len(lv.LogProb))
	}
	for i, p := range lv.LogProb {
		// Every value is finite but the unigram <s>, which is never
		// predicted: a probability of 0 (log10 -Inf) anywhere else is a
		// word the model could never produce, which verify refuses.
		if finite32(p) || k == 1 && uint32(i) == start && math.IsInf(float64(p), -1) {
			continue
		}
		return fmt.Errorf("cannot write the model: order %d entry %d (%s) has log10 probability %v", k, i, t.Words(t.Gram(k, i)), p)
	}
	for i, b := range lv.LogBackoff {
		if !finite32(b) {
			return fmt.Errorf("cannot write the model: order %d entry %d (%s) has log10 back-off %v", k, i, t.Words(t.Gram(k, i)), b)
		}
	}
	for _, c := range []struct {
		name     string
		values   []float32
		codebook []float32
	}{{"probability", lv.LogProb, lv.ProbCodebook}, {"back-off", lv.LogBackoff, lv.BackoffCodebook}} {
		if c.codebook == nil {
			continue
		}
		if c.values == nil {
			return fmt.Errorf("cannot write the model: order %d has a %s codebook but no %s column", k, c.name, c.name)
		}
		if len(c.codebook) > 1<<16 {
			return fmt.Errorf("cannot write the model: order %d %s codebook has %d values, more than 65536", k, c.name, len(c.codebook))
		}
		for j := 1; j < len(c.codebook); j++ {
			if !(c.codebook[j-1] < c.codebook[j]) {
				return fmt.Errorf("cannot write the model: order %d %s codebook is not strictly ascending at %d", k, c.name, j)
			}
		}
		if _, ok := codebookIndexes(c.values, c.codebook); !ok {
			return fmt.Errorf("cannot write the model: order %d holds a %s value outside its codebook", k, c.name)
		}
	}
	return nil
}

// finite32 reports whether f is neither NaN nor infinite: its exponent
// bits are not all ones (IEEE 754).
func finite32(f float32) bool { return math.Float32bits(f)&0x7f800000 != 0x7f800000 }

// buildSections lays out every section in the order the directory lists
// them: summary, build info, vocabulary, then per order its last words
// (order >= 2), probabilities, back-offs and child starts (orders below the
// top).
func buildSections(t *tables.Tables) ([]section, error) {
	n := t.Order()
	info, err := marshalInfo(t.Info)
	if err != nil {
		return nil, fmt.Errorf("cannot write the model's build info: %w", err)
	}
	if len(info) > MaxBuildInfo {
		return nil, fmt.Errorf("cannot write the model: build info of %d bytes exceeds %d (too many history lines or options?)", len(info), MaxBuildInfo)
	}
	starts, text := vocabularyBytes(t.Vocab)
	out := []section{
		{Section: Section{Kind: KindSummary}, data: summaryBytes(t, linksOf(t))},
		{Section: Section{Kind: KindBuildInfo}, data: info},
		{Section: Section{Kind: KindWordStarts}, data: starts},
		{Section: Section{Kind: KindWordText}, data: text},
	}
	for k := 1; k <= n; k++ {
		lv := &t.Levels[k-1]
		if k >= 2 {
			last := make([]byte, 4*len(lv.LogProb))
			for i := range lv.LogProb {
				putU32(last[4*i:], lv.Words[k*i+k-1])
			}
			out = append(out, section{Section: Section{Kind: KindLastWords, Order: k}, data: last})
		}
		out = append(out, columnSections(KindProbabilities, KindProbCodebook, k, lv.LogProb, lv.ProbCodebook, false)...)
		if k < n {
			out = append(out, columnSections(KindBackoffs, KindBackoffCodebook, k, lv.LogBackoff, lv.BackoffCodebook, false)...)
			out = append(out, section{Section: Section{Kind: KindChildStarts, Order: k}, data: childStarts(t, k)})
		}
	}
	return out, nil
}

// columnSections encodes one column: plain float32 values, or its codebook
// followed by the indexes, packed or (when tiered is allowed, version 3)
// tiered, whichever takes fewer bytes.
func columnSections(kind, codebookKind SectionKind, k int, values, codebook []float32, tiered bool) []section {
	if codebook == nil {
		return []section{{Section: Section{Kind: kind, Order: k}, data: floatBytes(values)}}
	}
	data, enc := encodeColumn(values, codebook, tiered) // checkWritable made sure every value is there
	return []section{
		{Section: Section{Kind: codebookKind, Order: k}, data: floatBytes(codebook)},
		{Section: Section{Kind: kind, Order: k, Encoding: enc}, data: data},
	}
}

// version returns the oldest format version that can hold t.
func version(t *tables.Tables) uint32 {
	for _, lv := range t.Levels {
		if lv.ProbCodebook != nil || lv.BackoffCodebook != nil {
			return 2
		}
	}
	return 1
}

// summaryBytes returns the summary section of t, whose links are links.
func summaryBytes(t *tables.Tables, links *tables.Links) []byte {
	n := t.Order()
	b := make([]byte, summaryFixedSize+8*n)
	start, _ := t.ID(tables.SentenceStart)
	end, _ := t.ID(tables.SentenceEnd)
	unk, _ := t.ID(tables.Unknown)
	var flags uint32
	if suffixClosed(links) {
		flags |= FlagSuffixClosed
	}
	putU32(b[0:], uint32(n))
	putU32(b[4:], uint32(len(t.Vocab)))
	putU32(b[8:], start)
	putU32(b[12:], end)
	putU32(b[16:], unk)
	putU32(b[20:], flags)
	for k := 1; k <= n; k++ {
		putU64(b[summaryFixedSize+8*(k-1):], uint64(t.Len(k)))
	}
	return b
}

// suffixClosed reports whether every stored k-gram's (k-1)-word suffix is
// stored.
func suffixClosed(links *tables.Links) bool {
	for _, suffixes := range links.Suffix {
		for _, s := range suffixes {
			if s < 0 {
				return false
			}
		}
	}
	return true
}

func vocabularyBytes(vocab []string) (starts, text []byte) {
	starts = make([]byte, 4*(len(vocab)+1))
	size := 0
	for _, w := range vocab {
		size += len(w)
	}
	text = make([]byte, 0, size)
	for i, w := range vocab {
		putU32(starts[4*i:], uint32(len(text)))
		text = append(text, w...)
	}
	putU32(starts[4*len(vocab):], uint32(len(text)))
	return starts, text
}

// floatBytes returns the little-endian bytes of the float32 values v: on a
// little-endian machine v's own memory, which the writer only reads, else
// a copy.
func floatBytes(v []float32) []byte {
	if littleEndian && len(v) > 0 {
		return unsafe.Slice((*byte)(unsafe.Pointer(unsafe.SliceData(v))), 4*len(v))
	}
	b := make([]byte, 4*len(v))
	for i, f := range v {
		putU32(b[4*i:], math.Float32bits(f))
	}
	return b
}

// littleEndian is whether this machine stores a float32 as the file does (a
// variable so that a test can take the other path).
var littleEndian = binary.NativeEndian.Uint16([]byte{1, 0}) == 1

// childStarts returns the n_k+1 child-start values of order k
// (childStartValues) as the little-endian 32-bit column of versions 1 and 2:
// entry i's children at order k+1 are [start[i], start[i+1]).
func childStarts(t *tables.Tables, k int) []byte {
	starts := childStartValues(t, k)
	b := make([]byte, 4*len(starts))
	for i, v := range starts {
		putU32(b[4*i:], v)
	}
	return b
}

// Size returns the number of bytes Write would produce for t: FileSize with
// no plan.
func Size(t *tables.Tables) (int64, error) {
	return FileSize(t, Planned{})
}
