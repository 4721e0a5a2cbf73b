package verify

import (
	"bytes"
	"crypto/ed25519"
	"errors"
	"fmt"
	"ingot/compile/fixture"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/format"
	"ingot/quantize"
)

// demoText is the bundled training text of the demo: invented spoken
// commands for the handheld unit of a fictional wetland reserve.
const demoText = "../cmd/ingot/demodata/commands.txt"

// corruptionModels returns the models of the corruption matrix, each of
// which passes every check: an order-3 model of the first 40 demo
// sentences (format version 1), the same quantized (version 2, with both
// kinds of codebook), and the same signed; and the same in format version
// 3 (plain, quantized, quantized and signed, quantized with key lists),
// whose Elias-Fano, key-list, contexts and word-hash sections are damaged
// too.
func corruptionModels(t *testing.T) []struct {
	name string
	data []byte
} {
	t.Helper()
	text, err := os.ReadFile(demoText)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(text)), "\n")
	tb := fixture.Estimate(t, lines[:40], 3, estimate.Options{Method: estimate.KneserNey})
	plain := marshal(t, tb)
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 4, Trainer: quantize.EqualMass})
	if err != nil {
		t.Fatal(err)
	}
	quantized := marshal(t, q)
	signed, err := format.Sign(plain, ed25519.NewKeyFromSeed(bytes.Repeat([]byte{0x2a}, ed25519.SeedSize)))
	if err != nil {
		t.Fatal(err)
	}
	signed3, err := format.Sign(marshal3(t, q), ed25519.NewKeyFromSeed(bytes.Repeat([]byte{0x2a}, ed25519.SeedSize)))
	if err != nil {
		t.Fatal(err)
	}
	// The quantized model with its last words in key lists (encodings 7
	// and 8), which the writer chooses on larger models.
	lists, err := format.MarshalKeyLists(q)
	if err != nil {
		t.Fatal(err)
	}
	// And in coded key lists (encodings 9 and 10), which the writer
	// chooses on larger models still.
	coded, err := format.MarshalCodedLists(q)
	if err != nil {
		t.Fatal(err)
	}
	models := []struct {
		name string
		data []byte
	}{
		{"plain", plain}, {"quantized", quantized}, {"signed", signed},
		{"plain v3", marshal3(t, tb)}, {"quantized v3", marshal3(t, q)}, {"signed quantized v3", signed3},
		{"key lists v3", lists}, {"coded key lists v3", coded},
	}
	for _, m := range models {
		if rep := run(t, m.data, Options{}); !rep.OK() {
			t.Fatalf("%s model fails before any damage:%s", m.name, problems(rep))
		}
		fm, err := format.FromBytes(m.data)
		if err != nil {
			t.Fatalf("%s model does not open: %v", m.name, err)
		}
		if err := fm.Verify(); err != nil {
			t.Fatalf("%s model: format verify: %v", m.name, err)
		}
	}
	return models
}

// region is a run of bytes of a model file and what verify must call it
// when one of them changes.
type region struct {
	category string // for the tallies: "header", "directory", a section kind, "padding"
	name     string // the Section verify and Model.Verify name
	start    int64
	end      int64
	// atOpen is set for bytes that format.FromBytes reads and checks
	// (header, directory, and the sections it checksums at open).
	atOpen bool
}

// regions splits a model file into the header, the directory, each
// section and each run of padding.
func regions(t *testing.T, data []byte) []region {
	t.Helper()
	m, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	secs := m.Sections()
	dirEnd := int64(64 + 32*len(secs))
	out := []region{
		{"header", "header", 0, 64, true},
		{"directory", "directory", 64, dirEnd, true},
	}
	pos := dirEnd
	for _, s := range secs {
		if s.Offset > pos {
			out = append(out, region{"padding", "padding before " + s.Name(), pos, s.Offset, false})
		}
		checked := s.Kind == format.KindSummary || s.Kind == format.KindBuildInfo ||
			s.Kind == format.KindProbCodebook || s.Kind == format.KindBackoffCodebook
		out = append(out, region{s.Kind.String(), s.Name(), s.Offset, s.Offset + s.Length, checked})
		pos = s.Offset + s.Length
	}
	if pos < int64(len(data)) {
		out = append(out, region{"padding", "padding at the end of the file", pos, int64(len(data)), false})
	}
	return out
}

// flip is one single-bit change.
type flip struct {
	at  int64
	bit uint
}

// flips returns the bit flips tried in a region: every bit of the header,
// the directory, the padding and of sections of at most 32 bytes; for
// larger sections sampledFlips bits at offsets drawn uniformly from the
// section's bytes.
func flips(r region, rng *rand.Rand) []flip {
	const sampledFlips = 96
	n := r.end - r.start
	var out []flip
	if r.category == "header" || r.category == "directory" || r.category == "padding" || n <= 32 {
		for at := r.start; at < r.end; at++ {
			for bit := range uint(8) {
				out = append(out, flip{at, bit})
			}
		}
		return out
	}
	for range sampledFlips {
		out = append(out, flip{r.start + rng.Int64N(n), uint(rng.IntN(8))})
	}
	return out
}

// caseTally counts the cases of one category.
type caseTally struct{ tried, detected int }

// Every single-bit flip in the header and directory, a sample of flips in
// every section, every flip in the padding and every truncation of three
// intact models (plain, quantized, signed) is detected:
//
//   - verify (the package API behind 'ingot verify') fails a check and
//     names the damaged part: the section holding the flipped bit (its
//     CRC-32C no longer matches, and a CRC whose generator has more than
//     one term detects every single-bit error: W. W. Peterson and D. T.
//     Brown (1961), "Cyclic codes for error detection", Proc. IRE 49(1);
//     recalled from memory), the header or directory for theirs (the
//     header checksum covers both), the padding run for padding; a
//     truncated file is reported as truncated by the header check. A flip
//     in the magic makes the file unreadable instead (exit 2 of the
//     command), which is detected too;
//   - format.FromBytes refuses the file, or opens it when the damage lies
//     only where open does not look by design (the large columns, the
//     signature, the padding: spec/FORMAT.md §6.1 checksums only the small
//     sections), and then Model.Verify fails naming the same part.
//
// The tallies per model and category are logged; any undetected case
// fails the test.
func TestCorruptionMatrix(t *testing.T) {
	rng := rand.New(rand.NewPCG(2024, 11))
	totals := map[string]*caseTally{}
	var order []string
	count := func(model, category string, ok bool) {
		key := model + "\t" + category
		if totals[key] == nil {
			totals[key] = &caseTally{}
			order = append(order, key)
		}
		totals[key].tried++
		if ok {
			totals[key].detected++
		}
	}
	failures := 0
	fail := func(format string, args ...any) {
		if failures++; failures <= 20 {
			t.Errorf(format, args...)
		}
	}
	kinds := map[format.SectionKind]bool{}
	for _, model := range corruptionModels(t) {
		clean := model.data
		for _, s := range mustSections(t, clean) {
			kinds[s.Kind] = true
		}
		for _, r := range regions(t, clean) {
			for _, f := range flips(r, rng) {
				data := slices.Clone(clean)
				data[f.at] ^= 1 << f.bit
				what := fmt.Sprintf("%s model, bit %d of byte %d (%s)", model.name, f.bit, f.at, r.name)
				why := flipUndetected(data, r, f)
				if why != "" {
					fail("%s: %s", what, why)
				}
				count(model.name, r.category, why == "")
			}
		}
		for n := range len(clean) {
			why := truncationUndetected(clean[:n])
			if why != "" {
				fail("%s model cut to %d of %d bytes: %s", model.name, n, len(clean), why)
			}
			count(model.name, "truncation", why == "")
		}
	}
	for k := format.KindSummary; k <= format.KindWordHash; k++ {
		if !kinds[k] {
			t.Errorf("no model has a %s section: the matrix misses a kind", k)
		}
	}
	tried, detected := 0, 0
	for _, key := range order {
		c := totals[key]
		model, category, _ := strings.Cut(key, "\t")
		t.Logf("%-10s %-22s %6d tried %6d detected", model, category, c.tried, c.detected)
		tried += c.tried
		detected += c.detected
	}
	t.Logf("%-33s %6d tried %6d detected", "all", tried, detected)
	if failures > 0 {
		t.Errorf("%d of %d damaged files not detected", failures, tried)
	}
}

func mustSections(t *testing.T, data []byte) []format.Section {
	t.Helper()
	m, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	return m.Sections()
}

// flipUndetected returns why a file with one flipped bit in region r
// escapes detection, or "" when it is detected as the matrix requires.
func flipUndetected(data []byte, r region, f flip) string {
	named := func(section string) bool {
		if r.category == "header" || r.category == "directory" {
			return section == "header" || section == "directory" || strings.HasPrefix(section, "directory entry ")
		}
		return section == r.name
	}

	rep, err := Bytes(data, Options{})
	switch {
	case f.at < int64(len(format.Magic)):
		if !errors.As(err, new(*UnreadableError)) {
			return fmt.Sprintf("a damaged magic gives report %v, error %v; want unreadable", rep != nil, err)
		}
	case err != nil:
		return fmt.Sprintf("verify calls the file unreadable: %v", err)
	case rep.OK():
		return "verify passes it"
	case !reportNames(rep, named):
		return fmt.Sprintf("verify does not name %s:%s", r.name, problems(rep))
	}

	m, err := format.FromBytes(data)
	if err != nil {
		if !errors.As(err, new(*format.FormatError)) {
			return fmt.Sprintf("open refuses it without a format error: %v", err)
		}
		return ""
	}
	if r.atOpen {
		return "open accepts damage in a part it checks"
	}
	err = m.Verify()
	var fe *format.FormatError
	switch {
	case err == nil:
		return "it opens and Model.Verify passes it"
	case !errors.As(err, &fe) || !named(fe.Section):
		return fmt.Sprintf("Model.Verify does not name %s: %v", r.name, err)
	}
	return ""
}

// truncationUndetected returns why a truncated file escapes detection, or
// "" when verify reports it truncated (or unreadable, when even the magic
// is cut) and open refuses it.
func truncationUndetected(data []byte) string {
	rep, err := Bytes(data, Options{})
	switch {
	case len(data) < len(format.Magic):
		if !errors.As(err, new(*UnreadableError)) {
			return fmt.Sprintf("a cut magic gives report %v, error %v; want unreadable", rep != nil, err)
		}
	case err != nil:
		return fmt.Sprintf("verify calls the file unreadable: %v", err)
	case rep.OK():
		return "verify passes it"
	default:
		c := rep.Check(CheckHeader)
		truncated := false
		for _, p := range c.Problems {
			truncated = truncated || strings.Contains(p.Msg, "truncated")
		}
		if c.Status != Fail || !truncated {
			return fmt.Sprintf("the header check does not report truncation:%s", problems(rep))
		}
	}
	if _, err := format.FromBytes(data); err == nil {
		return "open accepts it"
	}
	return ""
}

// reportNames reports whether a failed check of rep lists a problem in a
// section that named accepts.
func reportNames(rep *Report, named func(string) bool) bool {
	for _, c := range rep.Checks {
		if c.Status != Fail {
			continue
		}
		for _, p := range c.Problems {
			if named(p.Section) {
				return true
			}
		}
	}
	return false
}
