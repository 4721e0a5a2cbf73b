package verify

import (
	"encoding/binary"
	"errors"
	"fmt"
	"ingot/compile/fixture"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
)

const golden = "../spec/golden/tiny.ingot"

// Law of probability: every conditional distribution sums to one. The
// golden model was built by hand so that each of its contexts does, and
// models of every method on real text (the State of the Union addresses,
// CC0) are normalised by construction; all must pass at the default
// tolerance, with every check run.
func TestNormalisedModelsPass(t *testing.T) {
	tiny, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name     string
		data     []byte
		contexts int // 0: at least 1000
	}{{"golden", tiny, 1 + 11 + 14}}
	train := fixture.Train(t, 3000)
	reference := map[string]float64{} // largest |S-1| by tables.Sums
	for _, method := range estimate.Methods {
		tb := fixture.Estimate(t, train, 4, estimate.Options{Method: method})
		worst := 0.0
		tb.Sums(func(s tables.ContextSum) { worst = max(worst, math.Abs(s.Sum-1)) })
		reference[string(method)] = worst
		cases = append(cases, struct {
			name     string
			data     []byte
			contexts int
		}{string(method), marshal(t, tb), 0})
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rep := run(t, c.data, Options{})
			for _, ch := range rep.Checks {
				if ch.Status != Pass && !(ch.Name == CheckSuffixClosure && ch.Status == NotRun) {
					t.Errorf("%s: %s: %s%s", ch.Name, ch.Status, ch.Detail, problems(rep))
				}
			}
			if len(rep.Checks) != checkCount {
				t.Errorf("%d checks reported, want %d", len(rep.Checks), checkCount)
			}
			n := rep.Normalisation
			if n == nil {
				t.Fatal("no normalisation measured")
			}
			if c.contexts > 0 && n.Contexts != c.contexts || c.contexts == 0 && n.Contexts < 1000 {
				t.Errorf("%d contexts checked", n.Contexts)
			}
			total := 0
			for _, h := range n.Histogram {
				total += h
			}
			// tables.Sums computes the same sums on the in-memory tables by
			// a separate route (a search per n-gram from the root).
			if want, ok := reference[c.name]; ok && math.Abs(n.MaxDeviation-want) > 1e-12 {
				t.Errorf("largest |S-1| %.6g, tables.Sums finds %.6g", n.MaxDeviation, want)
			}
			if total != n.Contexts || n.MaxDeviation > 1e-5 || len(n.Worst) != 10 || n.Worst[0].Deviation() != n.MaxDeviation {
				t.Errorf("histogram %v of %d contexts, max %g, worst %v", n.Histogram, n.Contexts, n.MaxDeviation, n.Worst)
			}
		})
	}
}

// bruteSums returns S(h) for the empty context and every stored context,
// each summed over the whole vocabulary through Model.LogProb: the
// definition, at a cost of contexts times vocabulary.
func bruteSums(t *testing.T, data []byte) map[string]float64 {
	m, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	sum := func(h []uint32) float64 {
		s := 0.0
		for w := range uint32(m.VocabSize()) {
			if w != m.StartID() {
				s += math.Pow(10, m.LogProb(h, w))
			}
		}
		return s
	}
	out := map[string]float64{"": sum(nil)}
	for k := 1; k < m.Order(); k++ {
		it := m.Entries(k)
		for it.Next() {
			g := slices.Clone(it.Gram())
			words := make([]string, len(g))
			for i, id := range g {
				words[i] = m.Word(id)
			}
			out[strings.Join(words, " ")] = sum(g)
		}
	}
	return out
}

// The linear-time sums agree with the definition, S(h) = sum over the
// vocabulary of P(w|h) asked of the query path word by word, on models
// whose weights are wrong and that are not suffix-closed (so that h'w is
// often not stored and the pass asks the query path), run in one piece and
// split across workers.
func TestSumsMatchTheDefinition(t *testing.T) {
	tiny, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name string
		data []byte
	}{
		{"golden", tiny},
		{"random order 3", marshal(t, fixture.RandomTables(1, 40, []int{300, 500}))},
		{"random order 5", marshal(t, fixture.RandomTables(2, 25, []int{200, 400, 500, 500}))},
	} {
		want := bruteSums(t, c.data)
		var tops []string
		for h := range want {
			tops = append(tops, h)
		}
		slices.SortFunc(tops, func(a, b string) int {
			da, db := deviation(want[a]), deviation(want[b])
			switch {
			case da > db:
				return -1
			case da < db:
				return 1
			}
			return strings.Compare(a, b)
		})
		for _, split := range []int{0, 3} {
			t.Run(fmt.Sprintf("%s/split %d", c.name, split), func(t *testing.T) {
				v := &verifier{data: c.data, rep: &Report{}, split: split}
				if err := v.run(); err != nil {
					t.Fatal(err)
				}
				n := v.rep.Normalisation
				if n == nil {
					t.Fatalf("not run:%s", problems(v.rep))
				}
				if n.Contexts != len(want) {
					t.Errorf("%d contexts, want %d", n.Contexts, len(want))
				}
				// Sums of broken models carry their lower orders' sums as
				// float32 deviations: relative precision 1e-6 is plenty.
				if d := deviation(want[tops[0]]); math.Abs(n.MaxDeviation-d) > 1e-6*max(1, d) {
					t.Errorf("largest deviation %g, want %g", n.MaxDeviation, d)
				}
				for i, got := range n.Worst {
					h := strings.Join(got.Context, " ")
					if w, ok := want[h]; !ok || math.Abs(got.Sum-w) > 1e-6*max(1, math.Abs(w)) {
						t.Errorf("worst %d: %q sums to %.12g, by definition %.12g (stored: %v)", i, h, got.Sum, w, ok)
					}
				}
				clear := deviation(want[tops[0]]) > 1.001*deviation(want[tops[1]])
				if got := strings.Join(n.Worst[0].Context, " "); clear && got != tops[0] {
					t.Errorf("worst context %q, want %q", got, tops[0])
				}
			})
		}
	}
}

// A model whose back-off weights are scaled has intact bytes and structure:
// only normalisation can catch it, and it names the contexts.
func TestScaledBackoffsFailOnlyNormalisation(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 2000), 3, estimate.Options{Method: estimate.KneserNey})
	t.Run("a whole back-off section, bytes rewritten", func(t *testing.T) {
		data := marshal(t, tb)
		b, name := where(t, data, format.KindBackoffs, 2)
		for i := 0; i+4 <= len(b); i += 4 {
			v := math.Float32frombits(binaryLE32(b[i:]))
			putLE32(b[i:], math.Float32bits(v+float32(math.Log10(1.5))))
		}
		rep := run(t, reseal(data), Options{})
		if got := rep.Failed(); !slices.Equal(got, []string{CheckNormalisation}) {
			t.Fatalf("failed %v, want only normalisation:%s", got, problems(rep))
		}
		c := rep.Check(CheckNormalisation)
		if c.Count < 100 || !strings.Contains(c.Problems[0].Section, name) {
			t.Errorf("%d contexts caught, first %v; want many, in %s", c.Count, c.Problems[0], name)
		}
	})
	t.Run("one weight, through tables", func(t *testing.T) {
		changed := *tb
		changed.Levels = slices.Clone(tb.Levels)
		lv := &changed.Levels[1]
		lv.LogBackoff = slices.Clone(lv.LogBackoff)
		i := len(lv.LogBackoff) / 2
		lv.LogBackoff[i] += 0.01 // weight x 1.023
		rep := run(t, marshal(t, &changed), Options{})
		if got := rep.Failed(); !slices.Equal(got, []string{CheckNormalisation}) {
			t.Fatalf("failed %v, want only normalisation:%s", got, problems(rep))
		}
		want := changed.Words(changed.Gram(2, i))
		n := rep.Normalisation
		if got := strings.Join(n.Worst[0].Context, " "); got != want || n.Exceeding < 1 {
			t.Errorf("worst context %q (%d over), want %q", got, n.Exceeding, want)
		}
		if p := rep.Check(CheckNormalisation).Problems[0]; !strings.Contains(p.Msg, want) || p.Section != "back-offs of order 2" {
			t.Errorf("problem %v does not name %q in back-offs of order 2", p, want)
		}
	})
}

func binaryLE32(b []byte) uint32 { return binary.LittleEndian.Uint32(b) }
func putLE32(b []byte, v uint32) { binary.LittleEndian.PutUint32(b, v) }

// Every defect is caught by the check that owns it and named with its
// section and what is wrong; the checks that need what broke do not run.
func TestDefectsAreNamed(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 500), 3, estimate.Options{Method: estimate.WittenBell})
	clean := marshal(t, tb)
	start, _ := tb.ID(tables.SentenceStart)
	for _, c := range []struct {
		name    string
		damage  func(data []byte) []byte
		check   string
		section string
		msg     string
		notRun  []string
	}{
		{"NaN probability", func(d []byte) []byte {
			b, _ := where(t, d, format.KindProbabilities, 2)
			putLE32(b[4*5:], math.Float32bits(float32(math.NaN())))
			return reseal(d)
		}, CheckValues, "probabilities of order 2", fmt.Sprintf("entry 5 (%q) has log10 probability NaN", tb.Words(tb.Gram(2, 5))), []string{CheckNormalisation}},
		{"probability above one", func(d []byte) []byte {
			b, _ := where(t, d, format.KindProbabilities, 3)
			putLE32(b[0:], math.Float32bits(0.25))
			return reseal(d)
		}, CheckValues, "probabilities of order 3", "a probability above 1", []string{CheckNormalisation}},
		{"infinite back-off", func(d []byte) []byte {
			b, _ := where(t, d, format.KindBackoffs, 1)
			putLE32(b[4*7:], math.Float32bits(float32(math.Inf(-1))))
			return reseal(d)
		}, CheckValues, "back-offs of order 1", "log10 back-off weight -Inf", []string{CheckNormalisation}},
		{"<s> predicted", func(d []byte) []byte {
			b, _ := where(t, d, format.KindProbabilities, 1)
			putLE32(b[4*start:], math.Float32bits(-2))
			return reseal(d)
		}, CheckValues, "probabilities of order 1", "<s> is never predicted", nil},
		{"missing context: child starts fall back", func(d []byte) []byte {
			b, _ := where(t, d, format.KindChildStarts, 1)
			putLE32(b[4*20:], binaryLE32(b[4*19:])+binaryLE32(b[4*21:])) // beyond the next start
			return reseal(d)
		}, CheckPrefixClosure, "child starts of order 1", "have no stored context", []string{CheckOrder, CheckSuffixClosure, CheckNormalisation}},
		{"word id outside the vocabulary", func(d []byte) []byte {
			b, _ := where(t, d, format.KindLastWords, 3)
			putLE32(b[4*3:], uint32(len(tb.Vocab)+4))
			return reseal(d)
		}, CheckIDs, "last words of order 3", fmt.Sprintf("entry 3 holds word id %d, outside the vocabulary", len(tb.Vocab)+4), []string{CheckSuffixClosure, CheckNormalisation}},
		{"siblings out of order", func(d []byte) []byte {
			b, _ := where(t, d, format.KindLastWords, 2)
			for i := 4; i+8 <= len(b); i += 4 { // swap the first two siblings found
				if binaryLE32(b[i:]) < binaryLE32(b[i+4:]) && tb.Levels[1].Words[2*(i/4)] == tb.Levels[1].Words[2*(i/4+1)] {
					x, y := binaryLE32(b[i:]), binaryLE32(b[i+4:])
					putLE32(b[i:], y)
					putLE32(b[i+4:], x)
					break
				}
			}
			return reseal(d)
		}, CheckOrder, "last words of order 2", "does not come after its sibling", []string{CheckNormalisation}},
		{"vocabulary unsorted", func(d []byte) []byte {
			b, _ := where(t, d, format.KindWordText, 0)
			i := strings.Index(string(b), "zeal")
			copy(b[i:], "aeal")
			return reseal(d)
		}, CheckVocabulary, "word text", "does not sort after", []string{CheckNormalisation}},
		{"flipped bit in the digest", func(d []byte) []byte {
			d[30] ^= 4
			return d
		}, CheckDigest, "header", "content digest", []string{CheckOpens, CheckNormalisation}},
		{"flipped bit in a directory entry's checksum", func(d []byte) []byte {
			d[64+32*3+12] ^= 1
			return d
		}, CheckChecksums, "word text", "more likely its directory entry", []string{CheckOpens, CheckNormalisation}},
		{"section moved past the end", func(d []byte) []byte {
			d[64+32*2+22] = 0x40
			return d
		}, CheckDirectory, "directory entry 2 (word starts)", "extends past the end", []string{CheckDigest, CheckOpens}},
		{"version field damaged", func(d []byte) []byte {
			d[8] = 7
			return d
		}, CheckHeader, "header", "format version field holds 7", []string{CheckOpens}},
		{"padding not zero", func(d []byte) []byte {
			d[len(d)-1] = 1
			return d
		}, CheckPadding, "padding at the end of the file", "expected 0", []string{CheckOpens}},
		{"section missing from the directory", func(d []byte) []byte {
			d[64+32*1] = 12 // build info becomes an unknown kind
			return reseal(d)
		}, CheckOpens, "build info", "missing", []string{CheckVocabulary, CheckNormalisation}},
	} {
		t.Run(c.name, func(t *testing.T) {
			rep := run(t, c.damage(slices.Clone(clean)), Options{})
			ch := rep.Check(c.check)
			if ch == nil || ch.Status != Fail {
				t.Fatalf("check %s did not fail:%s", c.check, problems(rep))
			}
			found := false
			for _, p := range ch.Problems {
				found = found || strings.Contains(p.Section, c.section) && strings.Contains(p.Msg, c.msg)
			}
			if !found {
				t.Errorf("%s problems %v; want one in %q saying %q", c.check, ch.Problems, c.section, c.msg)
			}
			st := statuses(rep)
			for _, name := range c.notRun {
				if st[name] != NotRun {
					t.Errorf("%s is %s, want not run", name, st[name])
				}
			}
			if rep.OK() || rep.Err() == nil || !strings.Contains(rep.Err().Error(), c.check) {
				t.Errorf("report ok %v, error %v", rep.OK(), rep.Err())
			}
		})
	}
}

// A flipped bit inside any section is named: the CRC-32C of the section
// no longer matches (a CRC whose generator has more than one term detects
// every single-bit error: W. W. Peterson and D. T. Brown (1961), "Cyclic
// codes for error detection", Proc. IRE 49(1); reference recalled from
// memory).
func TestFlippedBitInEachSectionIsNamed(t *testing.T) {
	clean := marshal(t, fixture.Estimate(t, fixture.Train(t, 300), 3, estimate.Options{Method: estimate.Katz}))
	m, err := format.FromBytes(clean)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range m.Sections() {
		t.Run(s.Name(), func(t *testing.T) {
			data := slices.Clone(clean)
			data[s.Offset+s.Length/2] ^= 0x10
			rep := run(t, data, Options{})
			c := rep.Check(CheckChecksums)
			if c.Status != Fail || c.Count != 1 || c.Problems[0].Section != s.Name() || c.Problems[0].Offset != s.Offset {
				t.Fatalf("checksums %s %v; want one problem in %s at %d", c.Status, c.Problems, s.Name(), s.Offset)
			}
			if !strings.Contains(rep.Err().Error(), s.Name()) {
				t.Errorf("error %q does not name %s", rep.Err(), s.Name())
			}
		})
	}
}

// Every single-bit error anywhere in the golden file is caught (CRC-32C,
// the digest and the zero padding cover every byte), without a panic; a
// flip in the magic makes the file unreadable instead.
func TestEveryBitFlipIsCaught(t *testing.T) {
	clean, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	for i := range len(clean) * 8 {
		data := slices.Clone(clean)
		data[i/8] ^= 1 << (i % 8)
		rep, err := Bytes(data, Options{})
		var ue *UnreadableError
		switch {
		case i/8 < len(format.Magic):
			if !errors.As(err, &ue) {
				t.Fatalf("bit %d (magic): error %v", i, err)
			}
		case err != nil:
			t.Fatalf("bit %d: unreadable: %v", i, err)
		case rep.OK():
			t.Fatalf("bit %d of byte %d not caught", i%8, i/8)
		}
	}
}

// A truncated file is a failed check naming the header's length field and
// the sections cut off; a file too short for the magic is unreadable.
func TestTruncatedFile(t *testing.T) {
	clean, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	for _, n := range []int{len(clean) - 8, len(clean) - 100, 500, 100, 63, 8} {
		rep := run(t, clean[:n], Options{})
		c := rep.Check(CheckHeader)
		if rep.OK() || c.Status != Fail || !strings.Contains(c.Summary(), "truncated") {
			t.Errorf("cut to %d bytes: header %s %q", n, c.Status, c.Summary())
		}
	}
	for _, n := range []int{0, 7} {
		if _, err := Bytes(clean[:n], Options{}); !errors.As(err, new(*UnreadableError)) {
			t.Errorf("cut to %d bytes: error %v, want unreadable", n, err)
		}
	}
}

// Not a model at all, or a version this verifier does not know with an
// intact header: unreadable, not a failed check.
func TestUnreadable(t *testing.T) {
	clean, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	future := slices.Clone(clean)
	future[8] = 9
	reseal(future)
	for name, data := range map[string][]byte{
		"text":           []byte("turn the beacon on\nturn it off\n"),
		"text transfer":  []byte(strings.ReplaceAll(string(clean), "\r\n", "\n")),
		"future version": future,
	} {
		if _, err := Bytes(data, Options{}); !errors.As(err, new(*UnreadableError)) {
			t.Errorf("%s: error %v, want unreadable", name, err)
		}
	}
	if _, err := File("no/such/model.ingot", Options{}); err == nil || !strings.Contains(err.Error(), "no/such/model.ingot") {
		t.Errorf("missing file: %v", err)
	}
}

// Random damage never panics, whether or not the checksums are fixed up
// (which lets the damage reach the deeper checks); seeded.
func TestRandomDamageNeverPanics(t *testing.T) {
	clean := marshal(t, fixture.RandomTables(3, 30, []int{200, 300}))
	rng := rand.New(rand.NewPCG(11, 1))
	for i := range 600 {
		data := slices.Clone(clean)
		for range 1 + rng.IntN(4) {
			at := rng.IntN(len(data))
			data[at] = byte(rng.IntN(256))
		}
		if i%2 == 0 && int(binaryLE32(data[12:])) <= 40 {
			reseal(data)
		}
		func() {
			defer func() {
				if r := recover(); r != nil {
					t.Fatalf("damage %d: panic %v", i, r)
				}
			}()
			Bytes(data, Options{})
		}()
	}
}

// The report does not depend on how the normalisation pass is split.
func TestSplitDoesNotChangeTheReport(t *testing.T) {
	data := marshal(t, fixture.RandomTables(4, 60, []int{800, 900, 900}))
	var first *Report
	for _, split := range []int{1, 2, 5} {
		v := &verifier{data: data, rep: &Report{}, split: split}
		if err := v.run(); err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first = v.rep
			continue
		}
		if fmt.Sprint(*v.rep.Normalisation) != fmt.Sprint(*first.Normalisation) || fmt.Sprint(v.rep.Checks) != fmt.Sprint(first.Checks) {
			t.Errorf("split %d changes the report", split)
		}
	}
}

func TestTolerance(t *testing.T) {
	data, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	// The golden sums deviate by up to 3.9e-8 (float32 storage).
	for _, c := range []struct {
		tol  float64
		pass bool
	}{{0, true}, {1e-7, true}, {1e-8, false}} {
		rep := run(t, data, Options{Tolerance: c.tol})
		if rep.OK() != c.pass {
			t.Errorf("tolerance %g: ok %v, want %v", c.tol, rep.OK(), c.pass)
		}
	}
	m, _ := format.FromBytes(data)
	if DefaultTolerance(m) != 1e-5 {
		t.Errorf("default tolerance %g", DefaultTolerance(m))
	}
}

func TestBuckets(t *testing.T) {
	for _, c := range []struct {
		d    float64
		want int
	}{{0, 0}, {9.9e-10, 0}, {1e-9, 1}, {5e-7, 3}, {1e-5, 5}, {9.99e-4, 6}, {1e-3, 7}, {math.Inf(1), 7}} {
		if got := bucket(c.d); got != c.want {
			t.Errorf("bucket(%g) = %d, want %d", c.d, got, c.want)
		}
		if lo, hi := BucketBounds(c.want); !(lo <= c.d && (c.d < hi || math.IsInf(hi, 1))) {
			t.Errorf("%g outside bucket %d [%g, %g)", c.d, c.want, lo, hi)
		}
	}
}

// A model flagged suffix-closed whose n-grams lack their suffixes fails
// the suffix-closure check (and Model.Verify, through the same checker),
// each missing suffix named with its entry's words.
func TestFalseSuffixClosedFlag(t *testing.T) {
	tb := fixture.RandomTables(3, 12, []int{30, 40, 40})
	data := marshal(t, tb)
	if m, err := format.FromBytes(data); err != nil || m.SuffixClosed() {
		t.Fatalf("the random model should open and not be suffix-closed: %v", err)
	}
	b, _ := where(t, data, format.KindSummary, 0)
	putLE32(b[20:], binaryLE32(b[20:])|format.FlagSuffixClosed)
	data = reseal(data)
	rep := run(t, data, Options{})
	c := rep.Check(CheckSuffixClosure)
	if c == nil || c.Status != Fail || c.Count < 2 || !strings.Contains(c.Problems[0].Msg, "is stored but its suffix") {
		t.Fatalf("suffix-closure check: %+v", c)
	}
	m, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.Verify(); err == nil || !strings.Contains(err.Error(), "is stored but its suffix") {
		t.Errorf("Model.Verify = %v", err)
	}
}
