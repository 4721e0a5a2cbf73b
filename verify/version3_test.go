package verify

import (
	"ingot/compile/fixture"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/format"
)

// A version-3 model of real text passes every check, with the same
// normalisation figures as the same model in the tables layout; damage to
// its succinct structures is a named problem, and the checks that need a
// sound trie do not run.
func TestVersion3(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 500), 3, estimate.Options{Method: estimate.KneserNey})
	data := marshal3(t, tb)
	rep := run(t, data, Options{})
	if !rep.OK() || rep.Version != 3 {
		t.Fatalf("version %d, failed %v:%s", rep.Version, rep.Failed(), problems(rep))
	}
	old := run(t, marshal(t, tb), Options{})
	if a, b := rep.Check(CheckNormalisation).Detail, old.Check(CheckNormalisation).Detail; a != b {
		t.Errorf("normalisation differs between layouts:\n v3 %s\n v2 %s", a, b)
	}

	for _, c := range []struct {
		name string
		kind format.SectionKind
		k    int
	}{
		{"child starts", format.KindChildStarts, 1},
		{"last words of order 3", format.KindLastWords, 3},
		{"last words", format.KindLastWords, 2},
		{"contexts", format.KindContexts, 2},
	} {
		d := append([]byte(nil), data...)
		b, name := where(t, d, c.kind, c.k)
		at := structuralByte(t, d, b)
		if at < 0 {
			t.Errorf("%s: no flipped byte breaks a structural rule of format's checker", c.name)
			continue
		}
		b[at] ^= 0x04
		rep := run(t, reseal(d), Options{})
		if rep.OK() {
			t.Errorf("%s: damaged model passes", c.name)
			continue
		}
		found := false
		for _, ch := range rep.Checks {
			for _, p := range ch.Problems {
				if p.Section == name || strings.Contains(p.Msg, name) {
					found = true
				}
			}
		}
		if !found {
			t.Errorf("%s: no problem names %s:%s", c.name, name, problems(rep))
		}
	}
}

// structuralByte returns the first byte of section b (inside data), from
// its middle on, whose bit 2 flipped breaks a structural rule of format's
// own checker (format.Model.CheckStructure), or -1. Which bytes those are is
// the layout's business, which format alone knows: this test asks the checker
// instead of decoding the section, so that a change to the layout (a new
// encoding the writer chooses) touches only format/ and spec/.
func structuralByte(t *testing.T, data, b []byte) int {
	t.Helper()
	for i := range len(b) {
		at := (len(b)/2 + i) % len(b)
		b[at] ^= 0x04
		m, err := format.FromBytes(reseal(append([]byte(nil), data...)))
		b[at] ^= 0x04
		if err != nil {
			continue // refused at open: not what this test is about
		}
		broken := false
		m.CheckStructure(func(format.Rule, format.Problem) bool { broken = true; return false })
		if broken {
			return at
		}
	}
	return -1
}
