package format

import (
	"bytes"
	"crypto/sha256"
	"fmt"

	"ingot/compile/tables"
)

// Container is the header and directory of a model file as its bytes
// record them, read leniently by ScanContainer: every problem is reported,
// with its section and offset, and reading goes on wherever the bytes
// allow. Open reads the same fields strictly and stops at the first
// problem; ingot verify reports them all.
type Container struct {
	data []byte
	// Version and SectionCount are the header's fields as recorded.
	Version      int
	SectionCount int
	// HeaderIntact is set when the header checksum matches.
	HeaderIntact bool
	// DirectoryEnd is the offset just past the directory.
	DirectoryEnd int64
	// Entries holds every directory entry, in directory order.
	Entries []DirectoryEntry
}

// DirectoryEntry is one directory entry as recorded. Section's Offset and
// Length are set only when the section lies inside the file (InFile).
type DirectoryEntry struct {
	Section
	Index          int    // position in the directory
	RecordedOrder  uint32 // the order field as recorded
	RecordedOffset uint64
	RecordedLength uint64
	InFile         bool
}

// Where names the entry for problems: "directory entry 3 (word text)".
func (e DirectoryEntry) Where() string {
	return fmt.Sprintf("directory entry %d (%s)", e.Index, e.Name())
}

// ScanContainer reads the header of data (which starts with the magic)
// and, when it can, the directory, reporting every problem of the header.
// readable is false when the directory cannot be read (the section count
// or the file's length forbid it). An intact header that names a format
// version this reader does not know is an error: the file is not damaged
// but unreadable.
func ScanContainer(data []byte, report func(Problem)) (c *Container, readable bool, err error) {
	c = &Container{data: data}
	if len(data) < headerSize {
		report(Problem{"header", 0, fmt.Sprintf("file is %d bytes, shorter than the %d-byte header: truncated", len(data), headerSize)})
		return c, false, nil
	}
	version := u32(data[offVersion:])
	count := u32(data[offSectionCount:])
	c.Version, c.SectionCount = int(version), int(count)
	if count > maxSections {
		report(Problem{"header", offSectionCount, fmt.Sprintf("section count %d exceeds %d: header damaged", count, maxSections)})
		return c, false, nil
	}
	dirEnd := int64(headerSize) + directoryEntry*int64(count)
	if dirEnd > int64(len(data)) {
		report(Problem{"directory", headerSize, fmt.Sprintf("file is %d bytes, too short for a directory of %d sections ending at %d: truncated", len(data), count, dirEnd)})
		return c, false, nil
	}
	c.DirectoryEnd = dirEnd
	want := u32(data[offHeaderCRC:])
	got := updateChecksum(checksum(data[:offHeaderCRC]), data[headerSize:dirEnd])
	c.HeaderIntact = got == want
	if version < oldestVersion || version > Version {
		if c.HeaderIntact {
			return c, false, fmt.Errorf("file is format version %d; this verifier reads versions %d to %d", version, oldestVersion, Version)
		}
		report(Problem{"header", offVersion, fmt.Sprintf("format version field holds %d, and versions %d to %d exist: header damaged", version, oldestVersion, Version)})
	}
	if !c.HeaderIntact {
		report(Problem{"header", offHeaderCRC, fmt.Sprintf("checksum of the header and directory is %08x, the header records %08x: header or directory damaged", got, want)})
	}
	if length := u64(data[offFileLength:]); length != uint64(len(data)) {
		report(Problem{"header", offFileLength, fmt.Sprintf("file is %d bytes but its header records %d: truncated or extended", len(data), length)})
	}
	if r := u32(data[offReserved:]); r != 0 {
		report(Problem{"header", offReserved, fmt.Sprintf("reserved field is %08x, expected 0", r)})
	}
	size := uint64(len(data))
	for i := range int(count) {
		at := headerSize + directoryEntry*i
		b := data[at : at+directoryEntry]
		e := DirectoryEntry{Index: i, RecordedOrder: u32(b[8:]), RecordedOffset: u64(b[16:]), RecordedLength: u64(b[24:])}
		e.Kind = SectionKind(u32(b[0:]))
		e.Encoding = Encoding(u32(b[4:]))
		e.Order = int(e.RecordedOrder)
		e.Checksum = u32(b[12:])
		e.InFile = e.RecordedOffset <= size && e.RecordedLength <= size-e.RecordedOffset
		if e.InFile {
			e.Offset, e.Length = int64(e.RecordedOffset), int64(e.RecordedLength)
		}
		c.Entries = append(c.Entries, e)
	}
	return c, true, nil
}

// CheckDirectory applies the placement rules of spec §3.2 to every entry
// and reports each problem.
func (c *Container) CheckDirectory(report func(Problem)) {
	size := uint64(len(c.data))
	prevEnd := uint64(c.DirectoryEnd)
	seen := make(map[[2]uint32]int)
	for i := range c.Entries {
		e := &c.Entries[i]
		at := int64(headerSize + directoryEntry*i)
		off, length := e.RecordedOffset, e.RecordedLength
		if e.RecordedOrder > tables.MaxOrder {
			report(Problem{e.Where(), at + 8, fmt.Sprintf("order %d exceeds %d", e.RecordedOrder, tables.MaxOrder)})
		}
		if off%sectionAlignment != 0 {
			report(Problem{e.Where(), at + 16, fmt.Sprintf("section offset %d is not a multiple of %d", off, sectionAlignment)})
		}
		if off < prevEnd {
			report(Problem{e.Where(), at + 16, fmt.Sprintf("section offset %d overlaps the directory or the section before, which ends at %d", off, prevEnd)})
		}
		if !e.InFile {
			report(Problem{e.Where(), at + 16, fmt.Sprintf("section [%d, %d+%d) extends past the end of the %d-byte file: truncated, or the entry is damaged", off, off, length, size)})
			continue
		}
		prevEnd = max(prevEnd, off+length)
		key := [2]uint32{uint32(e.Kind), e.RecordedOrder}
		if j, dup := seen[key]; dup && e.Kind >= KindSummary && e.Kind <= KindWordHash {
			report(Problem{e.Where(), at, fmt.Sprintf("section appears twice in the directory, first as entry %d", j)})
		}
		seen[key] = i
	}
}

// CheckChecksums compares the CRC-32C of every section inside the file
// with its directory entry, and returns how many it computed.
func (c *Container) CheckChecksums(report func(Problem)) (checked int) {
	for _, e := range c.Entries {
		if !e.InFile {
			report(Problem{e.Where(), int64(headerSize + directoryEntry*e.Index), "checksum not computed: the section lies outside the file"})
			continue
		}
		checked++
		got := checksum(c.data[e.Offset : e.Offset+e.Length])
		switch {
		case got == e.Checksum:
		case c.HeaderIntact:
			report(Problem{e.Name(), e.Offset, fmt.Sprintf("checksum is %08x, directory entry %d records %08x: section damaged", got, e.Index, e.Checksum)})
		default:
			report(Problem{e.Name(), e.Offset, fmt.Sprintf("checksum is %08x, directory entry %d records %08x: the section or, since the header checksum fails too, more likely its directory entry is damaged", got, e.Index, e.Checksum)})
		}
	}
	return checked
}

// CheckDigest recomputes the SHA-256 content digest (spec §5) and reports
// a mismatch; ran is false when a section lies outside the file.
func (c *Container) CheckDigest(report func(Problem)) (sum [32]byte, ran bool) {
	for _, e := range c.Entries {
		if !e.InFile {
			return sum, false
		}
	}
	h := sha256.New()
	for _, e := range c.Entries {
		if e.Kind == KindSignature {
			continue
		}
		s := e.Section
		s.Order, s.Length = int(e.RecordedOrder), int64(e.RecordedLength)
		h.Write(digestRecord(s))
		h.Write(c.data[e.Offset : e.Offset+e.Length])
	}
	h.Sum(sum[:0])
	if recorded := c.data[offDigest : offDigest+32]; !bytes.Equal(sum[:], recorded) {
		report(Problem{"header", offDigest, fmt.Sprintf("content digest is %x, the header records %x: a section was changed after the model was built, or the digest field is damaged", sum, recorded)})
	}
	return sum, true
}

// CheckPadding checks that the bytes outside the header, the directory and
// the sections are zero, and that the file ends within 8 bytes of the last
// section. It needs a sound directory.
func (c *Container) CheckPadding(report func(Problem)) {
	zeros := func(b []byte, what string, at int64) {
		for j, x := range b {
			if x != 0 {
				report(Problem{what, at + int64(j), fmt.Sprintf("byte is %#02x, expected 0", x)})
				return
			}
		}
	}
	pos := c.DirectoryEnd
	for _, e := range c.Entries {
		zeros(c.data[pos:e.Offset], "padding before "+e.Name(), pos)
		pos = e.Offset + e.Length
	}
	// The length is checked before the bytes: an extended (or sparse)
	// file is refused without reading its whole tail.
	if tail := int64(len(c.data)) - pos; tail >= sectionAlignment {
		report(Problem{"end of file", pos, fmt.Sprintf("%d bytes follow the last section; at most %d bytes of padding may", tail, sectionAlignment-1)})
	} else {
		zeros(c.data[pos:], "padding at the end of the file", pos)
	}
}
