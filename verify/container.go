package verify

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"hash/crc32"

	"ingot/compile/tables"
	"ingot/format"
)

// The layout of spec/FORMAT.md §3. Verify reads the header and directory
// itself rather than through format.Open, which refuses a damaged header
// outright: reading them leniently lets verify say which part is damaged.
const (
	headerSize   = 64
	entrySize    = 32
	maxSections  = 1024
	alignment    = 8
	offVersion   = 8
	offCount     = 12
	offLength    = 16
	offDigest    = 24
	offReserved  = 56
	offHeaderCRC = 60
	oldestFormat = 1
)

func u32(b []byte) uint32 { return binary.LittleEndian.Uint32(b) }
func u64(b []byte) uint64 { return binary.LittleEndian.Uint64(b) }

// crc32c returns the CRC-32C (Castagnoli) of the concatenated parts.
func crc32c(parts ...[]byte) uint32 {
	table := crc32.MakeTable(crc32.Castagnoli)
	var crc uint32
	for _, p := range parts {
		crc = crc32.Update(crc, table, p)
	}
	return crc
}

// entry is one directory entry as the file records it.
type entry struct {
	// Section holds the entry; its Offset and Length are set only when the
	// section lies inside the file.
	format.Section
	index       int    // position in the directory
	order       uint32 // the order field as recorded
	off, length uint64 // offset and length as recorded
	inFile      bool   // off and length lie inside the file
}

// where names the entry for problems: "directory entry 3 (word text)".
func (e entry) where() string { return fmt.Sprintf("directory entry %d (%s)", e.index, e.Name()) }

// checkHeader checks the fixed header and reports whether the directory can
// be read. A file whose header checksum holds but whose version this
// verifier does not know is unreadable, not damaged.
func (v *verifier) checkHeader() (directoryReadable bool, err error) {
	c := Check{Name: CheckHeader, Status: Pass}
	defer func() { v.add(c) }()
	data := v.data
	if len(data) < headerSize {
		c.problem("header", 0, "file is %d bytes, shorter than the %d-byte header: truncated", len(data), headerSize)
		return false, nil
	}
	version := u32(data[offVersion:])
	count := u32(data[offCount:])
	if count > maxSections {
		c.problem("header", offCount, "section count %d exceeds %d: header damaged", count, maxSections)
		return false, nil
	}
	dirEnd := int64(headerSize) + entrySize*int64(count)
	if dirEnd > int64(len(data)) {
		c.problem("directory", headerSize, "file is %d bytes, too short for a directory of %d sections ending at %d: truncated", len(data), count, dirEnd)
		return false, nil
	}
	v.dirEnd = dirEnd
	want := u32(data[offHeaderCRC:])
	got := crc32c(data[:offHeaderCRC], data[headerSize:dirEnd])
	v.headerIntact = got == want
	if version < oldestFormat || version > format.Version {
		if v.headerIntact {
			return false, fmt.Errorf("file is format version %d; this verifier reads versions %d to %d", version, oldestFormat, format.Version)
		}
		c.problem("header", offVersion, "format version field holds %d, and versions %d to %d exist: header damaged", version, oldestFormat, format.Version)
	}
	v.version = int(version)
	if !v.headerIntact {
		c.problem("header", offHeaderCRC, "checksum of the header and directory is %08x, the header records %08x: header or directory damaged", got, want)
	}
	if length := u64(data[offLength:]); length != uint64(len(data)) {
		c.problem("header", offLength, "file is %d bytes but its header records %d: truncated or extended", len(data), length)
	}
	if r := u32(data[offReserved:]); r != 0 {
		c.problem("header", offReserved, "reserved field is %08x, expected 0", r)
	}
	c.Detail = fmt.Sprintf("format version %d, %d sections, %d bytes", version, count, len(data))
	size := uint64(len(data))
	for i := range int(count) {
		at := headerSize + entrySize*i
		b := data[at : at+entrySize]
		e := entry{index: i, order: u32(b[8:]), off: u64(b[16:]), length: u64(b[24:])}
		e.Kind = format.SectionKind(u32(b[0:]))
		e.Encoding = format.Encoding(u32(b[4:]))
		e.Order = int(e.order)
		e.Checksum = u32(b[12:])
		e.inFile = e.off <= size && e.length <= size-e.off
		if e.inFile {
			e.Offset, e.Length = int64(e.off), int64(e.length)
		}
		v.entries = append(v.entries, e)
	}
	return true, nil
}

// checkDirectory checks the placement rules of spec §3.2 for every entry.
func (v *verifier) checkDirectory() {
	c := Check{Name: CheckDirectory, Status: Pass}
	defer func() { v.add(c) }()
	size := uint64(len(v.data))
	prevEnd := uint64(v.dirEnd)
	seen := make(map[[2]uint32]int)
	for i := range v.entries {
		e := &v.entries[i]
		at := int64(headerSize + entrySize*i)
		off, length := e.off, e.length
		if e.order > tables.MaxOrder {
			c.problem(e.where(), at+8, "order %d exceeds %d", e.order, tables.MaxOrder)
		}
		if off%alignment != 0 {
			c.problem(e.where(), at+16, "section offset %d is not a multiple of %d", off, alignment)
		}
		if off < prevEnd {
			c.problem(e.where(), at+16, "section offset %d overlaps the directory or the section before, which ends at %d", off, prevEnd)
		}
		if !e.inFile {
			c.problem(e.where(), at+16, "section [%d, %d+%d) extends past the end of the %d-byte file: truncated, or the entry is damaged", off, off, length, size)
			continue
		}
		prevEnd = max(prevEnd, off+length)
		key := [2]uint32{uint32(e.Kind), e.order}
		if j, dup := seen[key]; dup && knownKind(e.Kind) {
			c.problem(e.where(), at, "section appears twice in the directory, first as entry %d", j)
		}
		seen[key] = i
	}
	c.Detail = fmt.Sprintf("%d sections inside the file, aligned and in order", len(v.entries))
	if c.Status == Fail {
		c.Detail = "sections misplaced"
	}
}

// knownKind reports whether the kind is one the format defines; readers
// ignore the others.
func knownKind(k format.SectionKind) bool {
	return k >= format.KindSummary && k <= format.KindWordHash
}

// checkChecksums compares the CRC-32C of every section with its directory
// entry.
func (v *verifier) checkChecksums() {
	c := Check{Name: CheckChecksums, Status: Pass}
	defer func() { v.add(c) }()
	checked := 0
	for _, e := range v.entries {
		if !e.inFile {
			c.problem(e.where(), int64(headerSize+entrySize*e.index), "checksum not computed: the section lies outside the file")
			continue
		}
		checked++
		got := crc32c(v.data[e.Offset : e.Offset+e.Length])
		if got == e.Checksum {
			continue
		}
		if v.headerIntact {
			c.problem(e.Name(), e.Offset, "checksum is %08x, directory entry %d records %08x: section damaged", got, e.index, e.Checksum)
		} else {
			c.problem(e.Name(), e.Offset, "checksum is %08x, directory entry %d records %08x: the section or, since the header checksum fails too, more likely its directory entry is damaged", got, e.index, e.Checksum)
		}
	}
	c.Detail = fmt.Sprintf("CRC-32C of %d sections match", checked)
	if c.Status == Fail {
		c.Detail = fmt.Sprintf("%d of %d sections damaged", c.Count, len(v.entries))
	}
}

// checkDigest recomputes the SHA-256 content digest of spec §5.
func (v *verifier) checkDigest() {
	c := Check{Name: CheckDigest, Status: Pass}
	defer func() { v.add(c) }()
	for _, e := range v.entries {
		if !e.inFile {
			c.Status, c.Detail = NotRun, "a section lies outside the file"
			return
		}
	}
	h := sha256.New()
	var record [20]byte
	for _, e := range v.entries {
		if e.Kind == format.KindSignature {
			continue
		}
		binary.LittleEndian.PutUint32(record[0:], uint32(e.Kind))
		binary.LittleEndian.PutUint32(record[4:], uint32(e.Encoding))
		binary.LittleEndian.PutUint32(record[8:], e.order)
		binary.LittleEndian.PutUint64(record[12:], e.length)
		h.Write(record[:])
		h.Write(v.data[e.Offset : e.Offset+e.Length])
	}
	var sum [32]byte
	h.Sum(sum[:0])
	recorded := v.data[offDigest : offDigest+32]
	if !bytes.Equal(sum[:], recorded) {
		c.problem("header", offDigest, "content digest is %x, the header records %x: a section was changed after the model was built, or the digest field is damaged", sum, recorded)
		c.Detail = "content digest differs"
		return
	}
	c.Detail = fmt.Sprintf("SHA-256 %x", sum)
}

// checkPadding checks that the bytes outside the header, the directory and
// the sections are zero, and that the file ends within 8 bytes of the last
// section.
func (v *verifier) checkPadding() {
	c := Check{Name: CheckPadding, Status: Pass}
	defer func() { v.add(c) }()
	if dir := v.check(CheckDirectory); dir == nil || dir.Status != Pass {
		c.Status, c.Detail = NotRun, "needs a sound directory"
		return
	}
	zeros := func(b []byte, what string, at int64) {
		for j, x := range b {
			if x != 0 {
				c.problem(what, at+int64(j), "byte is %#02x, expected 0", x)
				return
			}
		}
	}
	pos := v.dirEnd
	for _, e := range v.entries {
		zeros(v.data[pos:e.Offset], "padding before "+e.Name(), pos)
		pos = e.Offset + e.Length
	}
	// The length is checked before the bytes: an extended (or sparse)
	// file is refused without reading its whole tail.
	if tail := int64(len(v.data)) - pos; tail >= alignment {
		c.problem("end of file", pos, "%d bytes follow the last section; at most %d bytes of padding may", tail, alignment-1)
	} else {
		zeros(v.data[pos:], "padding at the end of the file", pos)
	}
	c.Detail = "zero"
}
