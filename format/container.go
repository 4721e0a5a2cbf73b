package format

import (
	"bytes"
	"crypto/sha256"
	"fmt"

	"ingot/compile/tables"
)

// Container is the header and directory of a model file as its bytes
// record them. scanContainer is the one parser of them: ScanContainer
// reads leniently for ingot verify (every problem is reported, with its
// section and offset, and reading goes on wherever the bytes allow), and
// Open reads through the same function and stops at the first problem.
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

// ScanContainer reads the header of data and, when it can, the directory,
// reporting every problem of the header. readable is false when the
// directory cannot be read (the section count or the file's length forbid
// it). The error is for bytes that are no model file at all, which no
// check can describe: fewer bytes than the magic, a wrong magic, or an
// intact header that names a format version this reader does not know
// (the file is not damaged but unreadable); it is a *FormatError.
func ScanContainer(data []byte, report func(Problem)) (c *Container, readable bool, err error) {
	c, readable, err = scanContainer(data, func(p Problem) bool { report(p); return true })
	return c, readable, err
}

// scanContainer is the one parser of the header and the directory (spec
// §3.1, §3.2 and §6.1 items 1 and 2). report hears each problem and says
// whether to go on; when it says stop, scanContainer returns at once with
// readable false.
func scanContainer(data []byte, report func(Problem) bool) (c *Container, readable bool, err error) {
	c = &Container{data: data}
	if n := min(len(data), len(Magic)); string(data[:n]) != Magic[:n] {
		return c, false, formatErr("header", 0, "bad magic %q: not an ingot model file, or damaged by a text-mode transfer", data[:n])
	}
	if len(data) < len(Magic) {
		return c, false, formatErr("header", 0, "file is %d bytes, shorter than the %d-byte header and its %d-byte magic: not an ingot model file, or truncated", len(data), headerSize, len(Magic))
	}
	if len(data) < headerSize {
		report(Problem{"header", 0, fmt.Sprintf("file is %d bytes, shorter than the %d-byte header: not an ingot model file, or truncated", len(data), headerSize)})
		return c, false, nil
	}
	version := u32(data[offVersion:])
	count := u32(data[offSectionCount:])
	c.Version, c.SectionCount = int(version), int(count)
	known := version >= oldestVersion && version <= Version
	if count > maxSections {
		if !known {
			report(Problem{"header", offVersion, fmt.Sprintf("file is format version %d; this reader reads versions %d to %d (the header cannot be checked: its section count is damaged too)", version, oldestVersion, Version)})
		}
		report(Problem{"header", offSectionCount, fmt.Sprintf("section count %d exceeds %d: header damaged", count, maxSections)})
		return c, false, nil
	}
	dirEnd := int64(headerSize) + directoryEntry*int64(count)
	if dirEnd > int64(len(data)) {
		if !known {
			report(Problem{"header", offVersion, fmt.Sprintf("file is format version %d; this reader reads versions %d to %d (the header cannot be checked: the file is too short for its directory)", version, oldestVersion, Version)})
		}
		report(Problem{"directory", headerSize, fmt.Sprintf("file is %d bytes, too short for a directory of %d sections ending at %d: truncated", len(data), count, dirEnd)})
		return c, false, nil
	}
	c.DirectoryEnd = dirEnd
	want := u32(data[offHeaderCRC:])
	got := updateChecksum(checksum(data[:offHeaderCRC]), data[headerSize:dirEnd])
	c.HeaderIntact = got == want
	if !known {
		if c.HeaderIntact {
			return c, false, formatErr("header", offVersion, "file is format version %d; this reader reads versions %d to %d", version, oldestVersion, Version)
		}
		if !report(Problem{"header", offVersion, fmt.Sprintf("file is format version %d; this reader reads versions %d to %d, and the header checksum fails: the format version field holds %d through damage, or the file is of a version whose header this reader cannot check", version, oldestVersion, Version, version)}) {
			return c, false, nil
		}
	}
	if !c.HeaderIntact && !report(Problem{"header", offHeaderCRC, fmt.Sprintf("header and directory checksum is %08x, the header records %08x: header or directory damaged", got, want)}) {
		return c, false, nil
	}
	if length := u64(data[offFileLength:]); length != uint64(len(data)) {
		if !report(Problem{"header", offFileLength, fmt.Sprintf("file is %d bytes but its header records %d: truncated or extended", len(data), length)}) {
			return c, false, nil
		}
	}
	size := uint64(len(data))
	c.Entries = make([]DirectoryEntry, count)
	for i := range c.Entries {
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
		c.Entries[i] = e
	}
	return c, true, nil
}

// CheckReserved reports a reserved header field that is not zero. Writers
// write zero there; readers do not refuse a file for it at open (spec
// §3.1), full verification does.
func (c *Container) CheckReserved(report func(Problem)) {
	if len(c.data) < headerSize {
		return
	}
	if r := u32(c.data[offReserved:]); r != 0 {
		report(Problem{"header", offReserved, fmt.Sprintf("reserved field is %08x, expected 0", r)})
	}
}

// CheckDirectory applies the placement rules of spec §3.2 to every entry
// and reports each problem.
func (c *Container) CheckDirectory(report func(Problem)) {
	c.checkDirectory(func(p Problem) bool { report(p); return true })
}

// checkDirectory is CheckDirectory; report says whether to go on.
func (c *Container) checkDirectory(report func(Problem) bool) {
	size := uint64(len(c.data))
	prevEnd := uint64(c.DirectoryEnd)
	seen := make(map[[2]uint32]int, len(c.Entries))
	for i := range c.Entries {
		e := &c.Entries[i]
		at := int64(headerSize + directoryEntry*i)
		off, length := e.RecordedOffset, e.RecordedLength
		if e.RecordedOrder > tables.MaxOrder && !report(Problem{e.Where(), at + 8, fmt.Sprintf("order %d exceeds %d", e.RecordedOrder, tables.MaxOrder)}) {
			return
		}
		if off%sectionAlignment != 0 && !report(Problem{e.Where(), at + 16, fmt.Sprintf("section offset %d is not a multiple of %d", off, sectionAlignment)}) {
			return
		}
		if off < prevEnd && !report(Problem{e.Where(), at + 16, fmt.Sprintf("section offset %d overlaps the directory or the section before, which ends at %d", off, prevEnd)}) {
			return
		}
		if !e.InFile {
			if !report(Problem{e.Where(), at + 16, fmt.Sprintf("section [%d, %d+%d) lies outside the %d-byte file: it extends past the end of the file (truncated, or the entry is damaged)", off, off, length, size)}) {
				return
			}
			continue
		}
		prevEnd = max(prevEnd, off+length)
		if e.Kind < KindSummary || e.Kind > KindWordHash {
			continue
		}
		key := [2]uint32{uint32(e.Kind), e.RecordedOrder}
		if j, dup := seen[key]; dup {
			if !report(Problem{e.Where(), at, fmt.Sprintf("section appears twice in the directory, first as entry %d", j)}) {
				return
			}
			continue
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
