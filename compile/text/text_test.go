package text

import (
	"strings"
	"testing"
)

func TestSentences(t *testing.T) {
	in := "  turn\tthe beacon\u00a0on \n\n \t \nmark <unk> waypoint\n"
	var got []string
	var lines []int
	err := Sentences("t", strings.NewReader(in), true, func(toks []string, line int) error {
		got = append(got, strings.Join(toks, "|"))
		lines = append(lines, line)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	// Runs of Unicode white space separate tokens (U+00A0 included);
	// empty and blank lines are skipped but still counted.
	if strings.Join(got, " / ") != "turn|the|beacon|on / mark|<unk>|waypoint" || lines[1] != 4 {
		t.Errorf("got %q at lines %v", got, lines)
	}
	err = Sentences("t", strings.NewReader(in), false, func([]string, int) error { return nil })
	if err == nil || err.Error() != "t:4: marker <unk> inside raw text" {
		t.Errorf("markers refused with %v", err)
	}
}
