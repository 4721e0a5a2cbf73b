package verify

import (
	"encoding/binary"
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
		at   func(b []byte) int // byte to change inside the section
	}{
		{"child starts", format.KindChildStarts, 1, func(b []byte) int { return len(b) - 9 }},
		{"last words of order 3 high bits", format.KindLastWords, 3, efHighBitsMiddle},
		{"last words high bits", format.KindLastWords, 2, efHighBitsMiddle},
		{"contexts", format.KindContexts, 2, func(b []byte) int { return 17 }},
	} {
		d := append([]byte(nil), data...)
		b, name := where(t, d, c.kind, c.k)
		b[c.at(b)] ^= 0x04
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

// efHighBitsMiddle returns the middle byte of the high bits of the
// Elias-Fano sequence a last-words section starts with (spec/FORMAT.md
// 4.8.1): the keys' own in one sequence per order, the list starts' in
// key lists and coded key lists, whose key stream a flipped bit can leave
// well formed (a different key, which only the checksums and the
// normalisation see).
func efHighBitsMiddle(b []byte) int {
	le := binary.LittleEndian
	n, last, l := le.Uint64(b), le.Uint64(b[8:]), uint64(le.Uint32(b[16:]))
	low, high := (n*l+63)/64, ((last>>l)+n+63)/64
	return 24 + 8*int(low) + 4*int(high)
}
