package format

import (
	"ingot/compile/fixture"
	"strings"
	"testing"
)

// The build info is capped at MaxBuildInfo: the writer refuses more, and so
// does the reader, which bounds what opening any file can allocate.
func TestBuildInfoIsCapped(t *testing.T) {
	tb := fixture.RandomTables(2, 30, []int{40})
	tb.Info.History = []string{strings.Repeat("x", MaxBuildInfo)}
	if _, err := Marshal(tb); err == nil || !strings.Contains(err.Error(), "exceeds 16384") {
		t.Errorf("writer: %v", err)
	}
	// A file whose build info is too large is refused at open: build it by
	// laying out the sections by hand, as a hostile writer would.
	tb.Info.History = nil
	sections, err := buildSections(tb)
	if err != nil {
		t.Fatal(err)
	}
	for i := range sections {
		if sections[i].Kind == KindBuildInfo {
			sections[i].data = []byte(`{"method":"x","history":["` + strings.Repeat("y", MaxBuildInfo) + `"]}`)
		}
	}
	var b strings.Builder
	header := assemble(sections, 1)
	if err := writeFile(&b, header, sections); err != nil {
		t.Fatal(err)
	}
	if _, err := FromBytes([]byte(b.String())); err == nil || !strings.Contains(err.Error(), "at most 16384 are allowed") {
		t.Errorf("reader: %v", err)
	}
	// The cap comes before the checksum: damage the oversized section and
	// the size, not the checksum, is what is reported (no time is spent
	// computing the CRC of a section that is refused anyway).
	damaged := []byte(b.String())
	at := strings.Index(b.String(), "yyyy")
	damaged[at] = 'z'
	if _, err := FromBytes(damaged); err == nil || !strings.Contains(err.Error(), "at most 16384 are allowed") {
		t.Errorf("reader, damaged oversized build info: %v", err)
	}
}
