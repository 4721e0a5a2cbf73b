package main

import (
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"ingot/format"
)

// Every renamed flag is refused by its old spelling with a message that
// names the new one, and the new spelling is accepted by the same command.
func TestRenamedFlagsNameTheNewSpelling(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	for key, renamed := range renamedFlags {
		command, old, _ := strings.Cut(key, " ")
		code, stdout, stderr := ingot(t, command, old, "1", "-o", filepath.Join(dir, "out"), model)
		want := "ingot: " + command + ": " + old + " is now called " + renamed + "\n"
		if code != exitBadInput || stderr != want || stdout != "" {
			t.Errorf("%s: exit %d, stderr %q, want exit 2 and %q", key, code, stderr, want)
		}
		c, _, err := newRoot(nil, nil).Find([]string{command})
		if err != nil || c.Flags().Lookup(strings.TrimPrefix(renamed, "--")) == nil {
			t.Errorf("%s: command has no flag %s", key, renamed)
		}
	}
}

// --version names the format versions the reader and the writer handle, as
// the format package reports them.
func TestVersionReportsFormatVersions(t *testing.T) {
	code, out, _ := ingot(t, "--version")
	oldest, newest := format.ReadVersions()
	floats, _ := format.WrittenVersions()
	want := fmt.Sprintf("reads versions %d to %d, writes %d", oldest, newest, floats)
	if code != 0 || !strings.HasPrefix(out, "ingot "+version+";") || !strings.Contains(out, want) {
		t.Errorf("--version: exit %d, %q; want %q", code, out, want)
	}
}
