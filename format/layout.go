package format

import (
	"encoding/binary"
	"fmt"
	"hash/crc32"
)

// Version is the newest format version this package writes and reads, and
// the one Write writes. Version 2 added quantized columns (codebooks and
// packed indexes); version 3 stores the trie succinctly (Elias-Fano child
// starts and last-word keys, back-off weights only where marked, a word
// hash). WriteVersion still writes versions 1 and 2.
const Version = 3

// oldestVersion is the oldest format version this package reads.
const oldestVersion = 1

// Magic is the 8-byte signature at the start of every model file. The first
// byte is outside ASCII and the last two are a carriage return and a line
// feed, so a transfer that treats the file as text damages the signature
// before anything else.
const Magic = "\x89INGOT\r\n"

// Fixed sizes of the file layout, in bytes.
const (
	headerSize       = 64 // magic through header checksum
	directoryEntry   = 32 // one section description
	summaryFixedSize = 24 // summary fields before the per-order counts
	sectionAlignment = 8  // every section starts at a multiple of this
	maxSections      = 1024
)

// MaxBuildInfo is the largest build-info section a writer writes and a
// reader accepts. Real build information takes a few kilobytes; the cap
// bounds what decoding its JSON can allocate (about 140 bytes per byte of
// dense JSON), so that opening any file allocates at most a few MiB beyond
// nothing (the file's own bytes are never copied).
const MaxBuildInfo = 16 << 10

// Offsets of the header fields.
const (
	offVersion      = 8
	offSectionCount = 12
	offFileLength   = 16
	offDigest       = 24
	offReserved     = 56
	offHeaderCRC    = 60
)

// noNode marks a context that is not stored in the model.
const noNode = ^uint32(0)

// SectionKind says what a section holds.
type SectionKind uint32

// The section kinds of version 1. Kinds marked "per order" appear once per
// order and carry that order in their directory entry; the others carry 0.
const (
	// KindSummary holds the counts and marker ids a reader needs (binary).
	KindSummary SectionKind = 1
	// KindBuildInfo holds how the model was built, as UTF-8 JSON.
	KindBuildInfo SectionKind = 2
	// KindWordStarts holds V+1 uint32 byte offsets into the word text.
	KindWordStarts SectionKind = 3
	// KindWordText holds the words of the vocabulary, concatenated.
	KindWordText SectionKind = 4
	// KindLastWords holds, per order k >= 2, the last word id of each entry.
	KindLastWords SectionKind = 5
	// KindProbabilities holds, per order, a float32 log10 probability per entry.
	KindProbabilities SectionKind = 6
	// KindBackoffs holds, per order below the top, a float32 log10 back-off
	// weight per entry.
	KindBackoffs SectionKind = 7
	// KindChildStarts holds, per order k below the top, n_k+1 uint32 values:
	// the children of entry i are entries [start[i], start[i+1]) of order k+1.
	KindChildStarts SectionKind = 8
	// KindSignature is reserved for a later signing step. It is excluded from
	// the content digest so that adding it leaves the digest unchanged.
	KindSignature SectionKind = 9
	// KindProbCodebook holds, per quantized order (version 2), the sorted
	// float32 log10 values that the probabilities' indexes refer to.
	KindProbCodebook SectionKind = 10
	// KindBackoffCodebook is the same for the back-off weights.
	KindBackoffCodebook SectionKind = 11
	// KindContexts (version 3, per order below the top) marks the
	// entries that are contexts (have children, or a back-off weight other
	// than +0.0), with a rank directory: only they have child starts and
	// back-off weights stored.
	KindContexts SectionKind = 12
	// KindWordHash (version 3) is a hash table from words to ids.
	KindWordHash SectionKind = 13
)

// String returns the kind's name as used in error messages and the
// specification.
func (k SectionKind) String() string {
	switch k {
	case KindSummary:
		return "summary"
	case KindBuildInfo:
		return "build info"
	case KindWordStarts:
		return "word starts"
	case KindWordText:
		return "word text"
	case KindLastWords:
		return "last words"
	case KindProbabilities:
		return "probabilities"
	case KindBackoffs:
		return "back-offs"
	case KindChildStarts:
		return "child starts"
	case KindSignature:
		return "signature"
	case KindProbCodebook:
		return "probability codebook"
	case KindBackoffCodebook:
		return "back-off codebook"
	case KindContexts:
		return "contexts"
	case KindWordHash:
		return "word hash"
	}
	return fmt.Sprintf("kind %d", uint32(k))
}

// perOrder reports whether sections of kind k belong to one order.
func (k SectionKind) perOrder() bool {
	return k == KindLastWords || k == KindProbabilities || k == KindBackoffs || k == KindChildStarts ||
		k == KindProbCodebook || k == KindBackoffCodebook || k == KindContexts
}

// Encoding says how a section's values are laid out.
type Encoding uint32

const (
	// Plain stores values as they are: little-endian uint32 or IEEE 754
	// float32 arrays, or raw bytes for text and JSON.
	Plain Encoding = 0
	// Packed (version 2, probability and back-off sections only) stores each
	// value as a B-bit index into the order's codebook: a uint32 B (1..16),
	// a uint32 0, then the indexes packed least significant bit first, entry
	// i in bits [i*B, (i+1)*B) of the little-endian bit stream.
	Packed Encoding = 1
	// EliasFano (version 3, child starts and last words) stores a
	// non-decreasing sequence in Elias-Fano form; last words are then word
	// ids under each parent.
	EliasFano Encoding = 2
	// EliasFanoRanks (version 3, last words of orders 3 and up) is
	// EliasFano whose keys are ranks among the successors of the parent's
	// suffix.
	EliasFanoRanks Encoding = 3
	// PackedIDs (version 3, the word hash) stores each slot as a word id
	// packed at the fewest bits that hold V, all ones marking an empty
	// slot.
	PackedIDs Encoding = 4
	// TaggedIDs (version 3, the word hash; what the writer writes) is
	// PackedIDs with a few bits of each word's hash, its fingerprint,
	// stored above its id, so that a lookup skips almost every wrong slot
	// without reading the word.
	TaggedIDs Encoding = 5
	// Tiered (version 3, probability and back-off sections only) stores
	// codebook indexes in two tiers: a narrow column of the most frequent
	// levels through a table, its all-ones value escaping to a wide column
	// of full indexes found by rank (spec/FORMAT.md §4.8.6).
	Tiered Encoding = 6
	// ListIDs (version 3, last words of order 2 and up) stores the keys
	// one sibling list at a time, each list at the fixed width of its
	// largest key, found through an Elias-Fano sequence of the lists'
	// starting bits indexed by the parent's rank among the contexts
	// (spec/FORMAT.md §4.8.7); keys are word ids.
	ListIDs Encoding = 7
	// ListRanks (version 3, last words of orders 3 and up) is ListIDs
	// whose keys are ranks among the successors of the parent's suffix.
	ListRanks Encoding = 8
	// CodedListIDs (version 3, last words of order 2 and up) is ListIDs
	// with each list of two keys or more coded as its 2-bit kind says:
	// at one width, in Elias-Fano, or the run 0 .. d-1 in no bits
	// (spec/FORMAT.md §4.8.8); keys are word ids.
	CodedListIDs Encoding = 9
	// CodedListRanks (version 3, last words of orders 3 and up) is
	// CodedListIDs whose keys are ranks among the successors of the
	// parent's suffix.
	CodedListRanks Encoding = 10
)

// String returns the encoding's name.
func (e Encoding) String() string {
	switch e {
	case Plain:
		return "plain"
	case Packed:
		return "packed codebook indexes"
	case EliasFano:
		return "Elias-Fano"
	case EliasFanoRanks:
		return "Elias-Fano successor ranks"
	case PackedIDs:
		return "packed word ids"
	case TaggedIDs:
		return "packed word ids with fingerprints"
	case Tiered:
		return "tiered codebook indexes"
	case ListIDs:
		return "word ids in sibling lists"
	case ListRanks:
		return "successor ranks in sibling lists"
	case CodedListIDs:
		return "word ids in coded sibling lists"
	case CodedListRanks:
		return "successor ranks in coded sibling lists"
	}
	return fmt.Sprintf("encoding %d", uint32(e))
}

// Summary flags.
const (
	// FlagSuffixClosed is set when the writer found that every stored k-gram
	// (k >= 2) has its (k-1)-word suffix stored too.
	FlagSuffixClosed uint32 = 1 << 0
)

// Section describes one section of a model file, as its directory entry
// records it.
type Section struct {
	Kind     SectionKind
	Encoding Encoding
	// Order is the n-gram order a per-order section belongs to, 0 otherwise.
	Order    int
	Checksum uint32 // CRC-32C (Castagnoli) of the section bytes
	Offset   int64  // from the start of the file, a multiple of 8
	Length   int64  // in bytes, padding excluded
}

// Name names the section for messages, for example "probabilities of order 2".
func (s Section) Name() string {
	if s.Order > 0 || s.Kind.perOrder() {
		return fmt.Sprintf("%s of order %d", s.Kind, s.Order)
	}
	return s.Kind.String()
}

// checksum returns the CRC-32C (Castagnoli polynomial) of b.
func checksum(b []byte) uint32 {
	return crc32.Checksum(b, crc32.MakeTable(crc32.Castagnoli))
}

// updateChecksum continues a CRC-32C over more bytes.
func updateChecksum(crc uint32, b []byte) uint32 {
	return crc32.Update(crc, crc32.MakeTable(crc32.Castagnoli), b)
}

// align rounds n up to the section alignment.
func align(n int64) int64 {
	return (n + sectionAlignment - 1) &^ (sectionAlignment - 1)
}

// digestRecord is the 20-byte record hashed before each section's bytes:
// kind, encoding, order (uint32 each) and length (uint64), little-endian.
func digestRecord(s Section) []byte {
	var r [20]byte
	putU32(r[0:], uint32(s.Kind))
	putU32(r[4:], uint32(s.Encoding))
	putU32(r[8:], uint32(s.Order))
	putU64(r[12:], uint64(s.Length))
	return r[:]
}

func putU32(b []byte, v uint32) { binary.LittleEndian.PutUint32(b, v) }
func putU64(b []byte, v uint64) { binary.LittleEndian.PutUint64(b, v) }
