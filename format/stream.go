package format

import (
	"crypto/sha256"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"unicode/utf8"

	"ingot/compile/tables"
)

// StreamWriter writes a version-3 model file from entries given one at a
// time, order by order, without holding the model in memory: the bytes of
// each section go to a file of their own in a temporary directory, and
// Finish assembles them behind the header. What it holds in memory is the
// vocabulary and, per order, one rank counter per 512 entries and one
// Elias-Fano sample per 256 values; so a model larger than memory can be
// written. For the same model it writes the same bytes as Write.
//
// The entries must be what the tables of package tables would hold, in
// their order (unigrams first, every word of the vocabulary; then each
// order sorted), and suffix-closed: every k-gram's (k-1)-word suffix is
// stored, as in every model estimated from counts. The caller gives each
// entry of order k >= 3 the rank of its last word among the successors of
// its suffix's context (the key of encoding EliasFanoRanks), and each entry
// below the top order its number of children at the next order.
type StreamWriter struct {
	dir    string
	vocab  []string
	counts []uint64
	start  uint32
	secs   []*streamSection // in file order (the first five are built at Finish)
	k      int              // order being added (0 before the first Add)
	n      uint64           // entries of order k added so far
	prev   []uint32
	// per-order state
	keysSec     *streamSection // last words (k >= 2): key lists or one sequence
	keys        *valueSpill    // the keys shifted into one sequence (k >= 2)
	keyBase     uint64
	lastKey     uint64
	list        []uint64    // the keys of the sibling list being added
	listEnds    *valueSpill // the bit where each non-empty list ends
	keyStream   *bitSpill   // the keys' bit stream
	codedEnds   *valueSpill // the bit where each non-empty coded list ends
	codedStream *bitSpill   // the keys' bit stream as coded lists
	prevStarts  *valueSpill // the child starts of the order below, kept for its lists
	probs       *streamSection
	marks       *markStream
	backoffs    *streamSection
	childStarts *valueSpill
	childRun    uint64
	err         error
	// top, when not nil, writes the top order's entries (Top); the order
	// below it is then ended as soon as its last entry is added
	// (belowEnded).
	top        *StreamWriter
	belowEnded bool
	// vocabSecs receives the vocabulary's sections (made as the writer
	// is made, on a goroutine of its own).
	vocabSecs chan []section
	vocab3    []section
}

// TopWriter takes the entries of a model's top order N >= 2, from a
// goroutine other than the one adding orders 1..N-1 to the StreamWriter,
// and at the same time: its sections go to files of their own.
type TopWriter struct{ w *StreamWriter }

// Top returns the writer of the top order's entries: from then on, w takes
// the entries of orders 1..N-1 only, the TopWriter those of order N
// (each in their order, as Add asks), and the two may be given them
// concurrently. Finish, once both are done, writes the same bytes as
// without it. Call it before the first Add, once.
func (w *StreamWriter) Top() (*TopWriter, error) {
	N := len(w.counts)
	if N < 2 || w.k != 0 || w.top != nil {
		return nil, fmt.Errorf("ingot model: no top-order writer for order %d (%d orders added)", N, w.k)
	}
	t := &StreamWriter{dir: w.dir, vocab: w.vocab, counts: w.counts, start: w.start}
	if err := t.startOrder(N); err != nil {
		t.Close()
		return nil, err
	}
	w.top = t
	return &TopWriter{t}, nil
}

// Add appends the next entry of the top order (see StreamWriter.Add).
func (t *TopWriter) Add(ids []uint32, rank uint32, logProb, logBackoff float32, children uint64) error {
	if len(ids) != t.w.k {
		err := fmt.Errorf("ingot model: %d-gram given to the writer of order %d", len(ids), t.w.k)
		t.w.err = err
		return err
	}
	return t.w.Add(ids, rank, logProb, logBackoff, children)
}

// streamSection is a section whose bytes go to a file as they are written
// (sp), or, for the sections Finish builds, in memory (data).
type streamSection struct {
	Section
	sp   *spill
	data []byte
}

func (s *streamSection) write(b []byte) error {
	s.Length += int64(len(b))
	return s.sp.write(b)
}

// put64 appends x, little-endian.
func (s *streamSection) put64(x uint64) error {
	s.Length += 8
	return s.sp.put64(x)
}

// put32 appends x, little-endian.
func (s *streamSection) put32(x uint32) error {
	s.Length += 4
	return s.sp.put32(x)
}

// close ends the section's writes: what is buffered for its file goes to
// it.
func (s *streamSection) close() error {
	if s.sp == nil {
		return nil
	}
	return s.sp.flush()
}

// NewStreamWriter starts a model of the given vocabulary (sorted bytewise,
// holding the three markers) with counts[k-1] entries at order k. Its
// section files go to a new directory under dir ("" for the system's
// temporary directory), removed by Close.
func NewStreamWriter(dir string, vocab []string, counts []uint64) (*StreamWriter, error) {
	if len(counts) < 1 || len(counts) > tables.MaxOrder {
		return nil, fmt.Errorf("ingot model: order %d outside 1..%d", len(counts), tables.MaxOrder)
	}
	if uint64(len(vocab)) >= uint64(noNode) || counts[0] != uint64(len(vocab)) {
		return nil, fmt.Errorf("ingot model: %d unigrams for a vocabulary of %d words", counts[0], len(vocab))
	}
	text := 0
	for id, w := range vocab {
		if !utf8.ValidString(w) {
			return nil, fmt.Errorf("cannot write the model: word id %d (%q) is not valid UTF-8", id, w)
		}
		if id > 0 && vocab[id-1] >= w {
			return nil, fmt.Errorf("cannot write the model: vocabulary not sorted or duplicated at id %d (%q)", id, w)
		}
		text += len(w)
	}
	if uint64(text) > math.MaxUint32 {
		return nil, fmt.Errorf("cannot write the model: vocabulary text of %d bytes exceeds 4 GiB", text)
	}
	if wordHashSlots(len(vocab)) > 1<<32-1 {
		return nil, fmt.Errorf("ingot model: cannot write: a vocabulary of %d words is too large for the word hash", len(vocab))
	}
	for k, n := range counts {
		if n > math.MaxUint32 {
			return nil, fmt.Errorf("cannot write the model: order %d has %d entries, more than 32-bit offsets address", k+1, n)
		}
	}
	probe := &tables.Tables{Vocab: vocab}
	for _, m := range []string{tables.SentenceStart, tables.SentenceEnd, tables.Unknown} {
		if _, ok := probe.ID(m); !ok {
			return nil, fmt.Errorf("cannot write the model: vocabulary lacks %s", m)
		}
	}
	start, _ := probe.ID(tables.SentenceStart)
	d, err := os.MkdirTemp(dir, "ingot-model-")
	if err != nil {
		return nil, fmt.Errorf("model sections: %w", err)
	}
	w := &StreamWriter{dir: d, vocab: vocab, counts: counts, start: start, vocabSecs: make(chan []section, 1)}
	// The vocabulary's sections are made beside the model's entries,
	// for Finish.
	go func() { w.vocabSecs <- vocabularySections3(vocab) }()
	return w, nil
}

// Dir returns the directory holding the section files.
func (w *StreamWriter) Dir() string { return w.dir }

// Close removes the section files. It is safe to call more than once, and
// after Finish.
func (w *StreamWriter) Close() error {
	if w.top != nil {
		w.top.Close()
	}
	for _, s := range w.secs {
		if s.sp != nil {
			s.sp.release()
		}
	}
	for _, b := range []*bitSpill{w.keyStream, w.codedStream} {
		if b != nil {
			b.close()
		}
	}
	for _, v := range []*valueSpill{w.keys, w.listEnds, w.codedEnds, w.childStarts, w.prevStarts} {
		if v != nil {
			v.close()
		}
	}
	return os.RemoveAll(w.dir)
}

func (w *StreamWriter) newSection(kind SectionKind, enc Encoding, k int) (*streamSection, error) {
	s := &streamSection{Section: Section{Kind: kind, Encoding: enc, Order: k}}
	s.sp = newSpill(filepath.Join(w.dir, fmt.Sprintf("%02d-%03d", k, len(w.secs))))
	w.secs = append(w.secs, s)
	return s, nil
}

// Add appends the next entry: its word ids, the rank key (orders >= 3; see
// StreamWriter), its log10 probability, and, below the top order, its log10
// back-off weight and its number of children at the next order.
func (w *StreamWriter) Add(ids []uint32, rank uint32, logProb, logBackoff float32, children uint64) error {
	if w.err != nil {
		return w.err
	}
	if err := w.add(ids, rank, logProb, logBackoff, children); err != nil {
		w.err = err
		return err
	}
	return nil
}

func (w *StreamWriter) add(ids []uint32, rank uint32, logProb, logBackoff float32, children uint64) error {
	k := len(ids)
	N := len(w.counts)
	if w.belowEnded {
		// (an entry of the top order before then is out of order)
		return fmt.Errorf("ingot model: %d-gram given after order %d, which ends where the top-order writer takes over", k, N-1)
	}
	if w.k == 0 || w.n == w.counts[w.k-1] {
		if err := w.endOrder(); err != nil {
			return err
		}
		if k != w.k+1 {
			return fmt.Errorf("ingot model: %d-gram given where order %d starts", k, w.k+1)
		}
		if err := w.startOrder(k); err != nil {
			return err
		}
	}
	if k != w.k {
		return fmt.Errorf("ingot model: %d-gram given among the %d-grams (%d of %d given)", k, w.k, w.n, w.counts[w.k-1])
	}
	i := w.n
	for _, id := range ids {
		if int(id) >= len(w.vocab) {
			return fmt.Errorf("cannot write the model: order %d entry %d: word id %d outside vocabulary of %d", k, i, id, len(w.vocab))
		}
	}
	if k == 1 && uint64(ids[0]) != i {
		return fmt.Errorf("cannot write the model: unigram %d holds word id %d", i, ids[0])
	}
	if k >= 2 && i > 0 && tables.Compare(w.prev, ids) >= 0 {
		return fmt.Errorf("cannot write the model: order %d entry %d out of order or duplicated", k, i)
	}
	if !(k == 1 && ids[0] == w.start && math.IsInf(float64(logProb), -1)) && (math.IsNaN(float64(logProb)) || math.IsInf(float64(logProb), 0)) {
		return fmt.Errorf("cannot write the model: order %d entry %d has log10 probability %v", k, i, logProb)
	}
	if k >= 2 {
		if i > 0 && tables.Compare(w.prev[:k-1], ids[:k-1]) != 0 {
			if err := w.flushList(); err != nil {
				return err
			}
			w.keyBase = w.lastKey
		}
		key := uint64(ids[k-1])
		if k >= 3 {
			key = uint64(rank)
		}
		if n := len(w.list); n > 0 && key <= w.list[n-1] {
			return fmt.Errorf("ingot model: order %d entry %d: key %d does not ascend under its parent", k, i, key)
		}
		w.list = append(w.list, key)
		w.lastKey = w.keyBase + key
		if err := w.keys.add(w.lastKey); err != nil {
			return err
		}
	}
	if err := w.probs.put32(math.Float32bits(logProb)); err != nil {
		return err
	}
	if k < N {
		if math.IsNaN(float64(logBackoff)) || math.IsInf(float64(logBackoff), 0) {
			return fmt.Errorf("cannot write the model: order %d entry %d has log10 back-off %v", k, i, logBackoff)
		}
		isContext := children > 0 || hasBackoff(logBackoff)
		if err := w.marks.add(isContext); err != nil {
			return err
		}
		if isContext {
			if err := w.backoffs.put32(math.Float32bits(logBackoff)); err != nil {
				return err
			}
			if err := w.childStarts.add(w.childRun); err != nil {
				return err
			}
		}
		w.childRun += children
	} else if children != 0 {
		return fmt.Errorf("ingot model: an entry of the top order %d with children", k)
	}
	w.prev = append(w.prev[:0], ids...)
	w.n++
	if w.top != nil && k == N-1 && w.n == w.counts[k-1] {
		// The order below the top one is complete: end it now, on the
		// caller's goroutine, rather than in Finish.
		w.belowEnded = true
		return w.endOrder()
	}
	return nil
}

func (w *StreamWriter) startOrder(k int) error {
	N := len(w.counts)
	w.k, w.n = k, 0
	w.keyBase, w.lastKey, w.childRun = 0, 0, 0
	w.list = w.list[:0]
	var err error
	if k >= 2 {
		enc := ListIDs
		if k >= 3 {
			enc = ListRanks
		}
		if w.keysSec, err = w.newSection(KindLastWords, enc, k); err != nil {
			return err
		}
		w.keys = w.newValueSpill(fmt.Sprintf("keys-%d", k), w.keysSec)
		w.listEnds = w.newValueSpill(fmt.Sprintf("list-ends-%d", k), nil)
		w.keyStream = w.newBitSpill(fmt.Sprintf("key-bits-%d", k))
		w.codedEnds = w.newValueSpill(fmt.Sprintf("coded-ends-%d", k), nil)
		w.codedStream = w.newBitSpill(fmt.Sprintf("coded-bits-%d", k))
	}
	if w.probs, err = w.newSection(KindProbabilities, Plain, k); err != nil {
		return err
	}
	if k < N {
		s, err := w.newSection(KindContexts, Plain, k)
		if err != nil {
			return err
		}
		w.marks = newMarkStream(s, w.counts[k-1])
		if w.backoffs, err = w.newSection(KindBackoffs, Plain, k); err != nil {
			return err
		}
		cs, err := w.newSection(KindChildStarts, EliasFano, k)
		if err != nil {
			return err
		}
		w.childStarts = w.newValueSpill(fmt.Sprintf("starts-%d", k), cs)
	}
	return nil
}

// endOrder completes the sections of the order being added.
func (w *StreamWriter) endOrder() error {
	if w.k == 0 {
		return nil
	}
	if w.n != w.counts[w.k-1] {
		return fmt.Errorf("ingot model: order %d has %d entries, %d announced", w.k, w.n, w.counts[w.k-1])
	}
	if w.keysSec != nil {
		if err := w.endKeys(); err != nil {
			return err
		}
	}
	if err := w.probs.close(); err != nil {
		return err
	}
	if w.k < len(w.counts) {
		if w.k < len(w.counts) && w.childRun != w.counts[w.k] {
			return fmt.Errorf("ingot model: order %d entries have %d children, order %d has %d entries", w.k, w.childRun, w.k+1, w.counts[w.k])
		}
		if err := w.marks.finish(); err != nil {
			return err
		}
		if err := w.backoffs.close(); err != nil {
			return err
		}
		if err := w.childStarts.add(w.childRun); err != nil {
			return err
		}
		if err := w.childStarts.encodeKeep(); err != nil {
			return err
		}
		if err := w.childStarts.sec.close(); err != nil {
			return err
		}
		w.prevStarts, w.childStarts = w.childStarts, nil
	}
	return nil
}

// Finish completes the last order and writes the model file to out, its
// build information info. The summary records the model as suffix-closed.
func (w *StreamWriter) Finish(out io.Writer, info tables.Info) error {
	if w.err != nil {
		return w.err
	}
	// The top order, when written apart, is ended on a goroutine of its
	// own while the sections before it are read for the digest.
	var (
		topSecs []*streamSection
		topDone chan error
	)
	waitTop := func() error {
		if topDone == nil {
			return nil
		}
		err := <-topDone
		topDone = nil
		return err
	}
	defer waitTop() // its files stay until it is done with them
	if t := w.top; t != nil {
		if t.err != nil {
			return t.err
		}
		if !w.belowEnded {
			return fmt.Errorf("ingot model: finished at order %d of %d", w.k, len(w.counts)-1)
		}
		// The top order's lists need the child starts of the order below.
		t.prevStarts, w.prevStarts = w.prevStarts, nil
		topSecs = t.secs
		topDone = make(chan error, 1)
		go func() { topDone <- t.endOrder() }()
	} else {
		if w.k != len(w.counts) {
			return fmt.Errorf("ingot model: finished at order %d of %d", w.k, len(w.counts))
		}
		if err := w.endOrder(); err != nil {
			return err
		}
	}
	infoBytes, err := marshalInfo(info)
	if err != nil {
		return fmt.Errorf("ingot model: cannot write build info: %w", err)
	}
	if len(infoBytes) > MaxBuildInfo {
		return fmt.Errorf("ingot model: cannot write: build info of %d bytes exceeds %d (too many history lines or options?)", len(infoBytes), MaxBuildInfo)
	}
	N := len(w.counts)
	summary := make([]byte, summaryFixedSize+8*N)
	probe := &tables.Tables{Vocab: w.vocab}
	end, _ := probe.ID(tables.SentenceEnd)
	unk, _ := probe.ID(tables.Unknown)
	putU32(summary[0:], uint32(N))
	putU32(summary[4:], uint32(len(w.vocab)))
	putU32(summary[8:], w.start)
	putU32(summary[12:], end)
	putU32(summary[16:], unk)
	putU32(summary[20:], FlagSuffixClosed)
	for k, n := range w.counts {
		putU64(summary[summaryFixedSize+8*k:], n)
	}
	head := []*streamSection{
		{Section: Section{Kind: KindSummary}, data: summary},
		{Section: Section{Kind: KindBuildInfo}, data: infoBytes},
	}
	if w.vocab3 == nil {
		w.vocab3 = <-w.vocabSecs
	}
	for _, s := range w.vocab3 {
		head = append(head, &streamSection{Section: s.Section, data: s.data})
	}
	secs := append(head, w.secs...)
	below := len(secs) // sections before the top order's
	secs = append(secs, topSecs...)
	// First pass: checksums and the digest, in one read of each section;
	// the header needs them all before the first section.
	header := make([]byte, headerSize+directoryEntry*len(secs))
	pos := int64(len(header))
	digest := sha256.New()
	for i, s := range secs {
		if i == below {
			if err := waitTop(); err != nil {
				return err
			}
			w.secs = append(w.secs, topSecs...)
			w.top.secs = nil
		}
		if s.sp == nil {
			s.Length = int64(len(s.data))
		} else if s.sp.n != s.Length {
			return fmt.Errorf("ingot model: %s holds %d bytes, %d written", s.Name(), s.sp.n, s.Length)
		}
		s.Offset = align(pos)
		pos = s.Offset + s.Length
		digest.Write(digestRecord(s.Section))
		crc := uint32(0)
		err := s.each(func(b []byte) {
			crc = updateChecksum(crc, b)
			digest.Write(b)
		})
		if err != nil {
			return err
		}
		s.Checksum = crc
		e := header[headerSize+directoryEntry*i:]
		putU32(e[0:], uint32(s.Kind))
		putU32(e[4:], uint32(s.Encoding))
		putU32(e[8:], uint32(s.Order))
		putU32(e[12:], s.Checksum)
		putU64(e[16:], uint64(s.Offset))
		putU64(e[24:], uint64(s.Length))
	}
	copy(header, Magic)
	putU32(header[offVersion:], 3)
	putU32(header[offSectionCount:], uint32(len(secs)))
	putU64(header[offFileLength:], uint64(align(pos)))
	copy(header[offDigest:], digest.Sum(nil))
	putU32(header[offHeaderCRC:], updateChecksum(checksum(header[:offHeaderCRC]), header[headerSize:]))
	// Second pass: the bytes.
	if _, err := out.Write(header); err != nil {
		return fmt.Errorf("writing the model header: %w", err)
	}
	var pad [sectionAlignment]byte
	pos = int64(len(header))
	for _, s := range secs {
		if _, err := out.Write(pad[:s.Offset-pos]); err != nil {
			return fmt.Errorf("writing the model: padding before %s: %w", s.Name(), err)
		}
		var werr error
		if err := s.each(func(b []byte) {
			if werr == nil {
				_, werr = out.Write(b)
			}
		}); err != nil {
			return err
		}
		if werr != nil {
			return fmt.Errorf("writing the model: %s: %w", s.Name(), werr)
		}
		pos = s.Offset + s.Length
	}
	if e := align(pos); e > pos {
		if _, err := out.Write(pad[:e-pos]); err != nil {
			return fmt.Errorf("writing the model: final padding: %w", err)
		}
	}
	return nil
}

// each calls fn with the section's bytes, in pieces.
func (s *streamSection) each(fn func([]byte)) error {
	if s.sp == nil {
		fn(s.data)
		return nil
	}
	return s.sp.each(func(b []byte) error {
		fn(b)
		return nil
	})
}

// valueSpill collects a non-decreasing sequence (in a spill), then encodes
// it as an Elias-Fano section (encodeEliasFano, streamed).
type valueSpill struct {
	sp   *spill
	n    uint64
	last uint64
	sec  *streamSection
}

func (w *StreamWriter) newValueSpill(name string, sec *streamSection) *valueSpill {
	return &valueSpill{sp: newSpill(filepath.Join(w.dir, name)), sec: sec}
}

func (v *valueSpill) add(x uint64) error {
	if v.n > 0 && x < v.last {
		return errors.New("ingot model: Elias-Fano values decrease")
	}
	v.n++
	v.last = x
	return v.sp.put64(x)
}

func (v *valueSpill) close() { v.sp.release() }

// values calls fn with every value in order.
func (v *valueSpill) values(fn func(i, x uint64) error) error { return v.sp.values(fn) }

// encode writes the Elias-Fano section of the values (the layout of
// encodeEliasFano: header, low bits, high bits, samples) and removes the
// value file.
func (v *valueSpill) encode() error {
	defer v.close()
	return v.encodeKeep()
}

// next returns a function that reads the values in order, one per call,
// from the first.
func (v *valueSpill) next() (func() (uint64, error), error) {
	c, err := v.sp.cursor()
	if err != nil {
		return nil, err
	}
	return c.next, nil
}

// encodeKeep is encode that keeps the values, for values() and next();
// neither closes the section, to which more bytes may follow.
func (v *valueSpill) encodeKeep() error {
	s := v.sec
	n, last := v.n, v.last
	l := efLowBits(n, last)
	lowW, highW, sampW := efSizes(n, last, l)
	var hdr [efHeader]byte
	putU64(hdr[0:], n)
	putU64(hdr[8:], last)
	putU32(hdr[16:], uint32(l))
	if err := s.write(hdr[:]); err != nil {
		return err
	}
	emit := s.put64
	// Low bits, L per value, packed from bit 0 of word 0.
	var cur uint64
	var written uint64
	if l > 0 {
		mask := uint64(1)<<l - 1
		err := v.values(func(i, x uint64) error {
			bit := i * uint64(l)
			if bit/64 > written {
				if err := emit(cur); err != nil {
					return err
				}
				written++
				cur = 0
			}
			cur |= (x & mask) << (bit % 64)
			if bit%64+uint64(l) > 64 {
				if err := emit(cur); err != nil {
					return err
				}
				written++
				cur = (x & mask) >> (64 - bit%64)
			}
			return nil
		})
		if err != nil {
			return err
		}
	}
	for ; written < lowW; written++ {
		if err := emit(cur); err != nil {
			return err
		}
		cur = 0
	}
	// High bits: bit (x >> L) + i set; positions increase.
	samples := make([]uint64, 0, sampW)
	cur, written = 0, 0
	err := v.values(func(i, x uint64) error {
		p := x>>l + i
		for p/64 > written {
			if err := emit(cur); err != nil {
				return err
			}
			written++
			cur = 0
		}
		cur |= 1 << (p % 64)
		if i%efSample == 0 {
			samples = append(samples, p)
		}
		return nil
	})
	if err != nil {
		return err
	}
	for ; written < highW; written++ {
		if err := emit(cur); err != nil {
			return err
		}
		cur = 0
	}
	for _, p := range samples {
		if err := emit(p); err != nil {
			return err
		}
	}
	return nil
}

// markStream writes a marks section (encodeMarks, streamed): the bits go
// to the file as they come, the rank counters (one per 512 entries) are
// kept and written after them, and the header's counts are filled in at
// the end.
type markStream struct {
	s        *streamSection
	n, i     uint64
	count    uint64
	word     uint64
	counters []uint32
}

func newMarkStream(s *streamSection, n uint64) *markStream {
	m := &markStream{s: s, n: n}
	var hdr [marksHeader]byte
	putU64(hdr[0:], n)
	s.write(hdr[:]) // count filled in by finish
	return m
}

func (m *markStream) add(mark bool) error {
	if m.i%marksBlock == 0 {
		m.counters = append(m.counters, uint32(m.count))
	}
	if mark {
		m.word |= 1 << (m.i % 64)
		m.count++
	}
	m.i++
	if m.i%64 == 0 {
		w := m.word
		m.word = 0
		return m.s.put64(w)
	}
	return nil
}

func (m *markStream) finish() error {
	if m.i%64 != 0 {
		var b [8]byte
		binary.LittleEndian.PutUint64(b[:], m.word)
		if err := m.s.write(b[:]); err != nil {
			return err
		}
	}
	_, counters := marksSizes(m.n)
	if uint64(len(m.counters)) != counters {
		return fmt.Errorf("ingot model: %d marks given, %d announced", m.i, m.n)
	}
	var b [4]byte
	for _, c := range m.counters {
		putU32(b[:], c)
		if err := m.s.write(b[:]); err != nil {
			return err
		}
	}
	var c [8]byte
	putU64(c[:], m.count)
	if err := m.s.sp.patch(8, c[:]); err != nil {
		return err
	}
	return m.s.close()
}

// flushList writes the sibling list being added to the key stream, at the
// width of its largest key, and records where it ends.
func (w *StreamWriter) flushList() error {
	if len(w.list) == 0 {
		return nil
	}
	width := keyWidth(w.list[len(w.list)-1])
	for _, key := range w.list {
		if err := w.keyStream.put(key, width); err != nil {
			return err
		}
	}
	if err := putCodedList(w.list, w.codedStream.put); err != nil {
		return err
	}
	w.list = w.list[:0]
	if err := w.codedEnds.add(w.codedStream.bits); err != nil {
		return err
	}
	return w.listEnds.add(w.keyStream.bits)
}

// streamKeysForm is the choice endKeys makes (chooseKeysForm); a test
// replaces it to write each form through the stream writer.
var streamKeysForm = chooseKeysForm

// endKeys completes the last words of the order being added: one
// Elias-Fano sequence, key lists (encodeKeyLists: the bit start of each
// context's list of the order below, empty lists included, in
// Elias-Fano, then the key stream) or coded key lists (the same, with the
// coded stream), as lastWordKeys chooses (chooseKeysForm).
func (w *StreamWriter) endKeys() error {
	if err := w.flushList(); err != nil {
		return err
	}
	m := w.prevStarts.n - 1 // contexts of the order below
	form := streamKeysForm(efLength(w.keys.n, w.keys.last), keyListsLength(m, w.keyStream.bits), keyListsLength(m, w.codedStream.bits))
	done := func() {
		for _, b := range []*bitSpill{w.keyStream, w.codedStream} {
			b.close()
		}
		for _, v := range []*valueSpill{w.listEnds, w.codedEnds, w.prevStarts} {
			v.close()
		}
		w.keyStream, w.codedStream, w.listEnds, w.codedEnds, w.prevStarts, w.keysSec = nil, nil, nil, nil, nil, nil
	}
	if form == formOne {
		w.keysSec.Encoding = EliasFano
		if w.k >= 3 {
			w.keysSec.Encoding = EliasFanoRanks
		}
		err := w.keys.encode()
		if err == nil {
			err = w.keysSec.close()
		}
		w.keys = nil
		done()
		return err
	}
	w.keys.close()
	w.keys = nil
	ends, stream := w.listEnds, w.keyStream
	if form == formCoded {
		ends, stream = w.codedEnds, w.codedStream
		w.keysSec.Encoding = CodedListIDs
		if w.k >= 3 {
			w.keysSec.Encoding = CodedListRanks
		}
	}
	defer done()
	starts := w.newValueSpill(fmt.Sprintf("list-starts-%d", w.k), w.keysSec)
	defer starts.close()
	childStart, err := w.prevStarts.next()
	if err != nil {
		return err
	}
	listEnd, err := ends.next()
	if err != nil {
		return err
	}
	var bit uint64
	c, err := childStart()
	for r := uint64(1); err == nil && r < w.prevStarts.n; r++ {
		if err = starts.add(bit); err != nil {
			break
		}
		var d uint64
		if d, err = childStart(); err == nil && d > c {
			bit, err = listEnd()
		}
		c = d
	}
	if err == nil {
		err = starts.add(bit)
	}
	if err == nil && bit != stream.bits {
		err = fmt.Errorf("ingot model: order %d: lists of %d key bits, %d written", w.k, bit, stream.bits)
	}
	if err != nil {
		return fmt.Errorf("writing the last words of order %d: %w", w.k, err)
	}
	if err := starts.encode(); err != nil {
		return err
	}
	if err := stream.copyTo(w.keysSec); err != nil {
		return err
	}
	return w.keysSec.close()
}

// bitSpill collects a bit stream (in a spill), 64 bits at a time.
type bitSpill struct {
	sp   *spill
	cur  uint64 // the bits of the word being filled
	bits uint64 // bits written
}

func (w *StreamWriter) newBitSpill(name string) *bitSpill {
	return &bitSpill{sp: newSpill(filepath.Join(w.dir, name))}
}

// put appends the width low bits of v.
func (b *bitSpill) put(v uint64, width uint) error {
	if width == 0 {
		return nil
	}
	off := uint(b.bits % 64)
	b.cur |= v << off
	b.bits += uint64(width)
	if off+width < 64 {
		return nil
	}
	word := b.cur
	b.cur = 0
	if off+width > 64 {
		b.cur = v >> (64 - off)
	}
	return b.sp.put64(word)
}

// copyTo appends the stream, its last word padded with zeros, to s.
func (b *bitSpill) copyTo(s *streamSection) error {
	if b.bits%64 != 0 {
		if err := b.sp.put64(b.cur); err != nil {
			return err
		}
	}
	return b.sp.each(s.write)
}

func (b *bitSpill) close() { b.sp.release() }
