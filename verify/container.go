package verify

import (
	"fmt"

	"ingot/format"
)

// The container checks report what format.ScanContainer and the
// Container's checks find: the header, the directory's placement rules,
// the section checksums, the content digest and the padding. The format
// package reads the bytes; verify names the checks and says why one did
// not run.

// collect returns a report function adding problems to c.
func collect(c *Check) func(format.Problem) {
	return func(p format.Problem) { c.problem(p.Section, p.Offset, "%s", p.Msg) }
}

// checkHeader checks the fixed header and reports whether the directory can
// be read. Bytes that do not start with the magic, and a file whose header
// checksum holds but whose version this verifier does not know, are
// unreadable, not damaged (format.ScanContainer's error).
func (v *verifier) checkHeader() (directoryReadable bool, err error) {
	c := Check{Name: CheckHeader, Status: Pass}
	cont, readable, err := format.ScanContainer(v.data, collect(&c))
	if err != nil {
		return false, err
	}
	cont.CheckReserved(collect(&c))
	v.container = cont
	v.version = cont.Version
	if readable {
		c.Detail = fmt.Sprintf("format version %d, %d sections, %d bytes", cont.Version, cont.SectionCount, len(v.data))
	}
	v.add(c)
	return readable, nil
}

// checkDirectory checks the placement rules of spec §3.2 for every entry.
func (v *verifier) checkDirectory() {
	c := Check{Name: CheckDirectory, Status: Pass}
	v.container.CheckDirectory(collect(&c))
	c.Detail = fmt.Sprintf("%d sections inside the file, aligned and in order", len(v.container.Entries))
	if c.Status == Fail {
		c.Detail = "sections misplaced"
	}
	v.add(c)
}

// checkChecksums compares the CRC-32C of every section with its directory
// entry.
func (v *verifier) checkChecksums() {
	c := Check{Name: CheckChecksums, Status: Pass}
	checked := v.container.CheckChecksums(collect(&c))
	c.Detail = fmt.Sprintf("CRC-32C of %d sections match", checked)
	if c.Status == Fail {
		c.Detail = fmt.Sprintf("%d of %d sections damaged", c.Count, len(v.container.Entries))
	}
	v.add(c)
}

// checkDigest recomputes the SHA-256 content digest of spec §5.
func (v *verifier) checkDigest() {
	c := Check{Name: CheckDigest, Status: Pass}
	sum, ran := v.container.CheckDigest(collect(&c))
	switch {
	case !ran:
		c.Status, c.Detail = NotRun, "a section lies outside the file"
	case c.Status == Fail:
		c.Detail = "content digest differs"
	default:
		c.Detail = fmt.Sprintf("SHA-256 %x", sum)
	}
	v.add(c)
}

// checkPadding checks that the bytes outside the header, the directory and
// the sections are zero, and that the file ends within 8 bytes of the last
// section.
func (v *verifier) checkPadding() {
	c := Check{Name: CheckPadding, Status: Pass}
	if dir := v.check(CheckDirectory); dir == nil || dir.Status != Pass {
		c.Status, c.Detail = NotRun, "needs a sound directory"
	} else {
		v.container.CheckPadding(collect(&c))
		c.Detail = "zero"
	}
	v.add(c)
}
