package estimate

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"reflect"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/format"
)

// streamed estimates c's model with EstimateStreamed on a memory budget and
// returns the model file and the result.
func streamed(t *testing.T, c *counts.Counts, opt Options, memory int64) ([]byte, *StreamResult, error) {
	return streamedAhead(t, c, opt, memory, false)
}

// streamedAhead is streamed, with the orders linked as they are spooled
// (a Linker) and the top order written apart (format.StreamWriter.Top)
// when ahead is true.
func streamedAhead(t *testing.T, c *counts.Counts, opt Options, memory int64, ahead bool) ([]byte, *StreamResult, error) {
	t.Helper()
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	so := StreamOptions{Memory: memory, Dir: dir}
	var done func(*counts.Spooled)
	var started func(*counts.Tail)
	if ahead {
		so.Linker = StartLinker(context.Background(), opt, so)
		done, started = so.Linker.Spooled, so.Linker.Started
	}
	sp, err := counts.SpoolTail(opt.Order, []counts.Source{{Name: "counts.bin", R: &bin}}, dir, done, started)
	if err != nil {
		t.Fatal(err)
	}
	sw, err := format.NewStreamWriter(dir, sp.Vocab, sp.Entries)
	if err != nil {
		t.Fatal(err)
	}
	defer sw.Close()
	if ahead && sp.Order() >= 2 {
		// and the top order written on a goroutine of its own
		if so.Top, err = sw.Top(); err != nil {
			t.Fatal(err)
		}
	}
	res, err := EstimateStreamed(context.Background(), sp, opt, so, sw)
	if err != nil {
		return nil, nil, err
	}
	// Where the linker's links are taken, its top order was linked
	// behind the spool (Linker.Started).
	if ahead && res.LinkedAhead && opt.Order >= 3 && so.Linker.behind != opt.Order {
		t.Errorf("%s order %d: the top order was not linked behind its spool (%d)", opt.Method, opt.Order, so.Linker.behind)
	}
	var out bytes.Buffer
	if err := sw.Finish(&out, res.Info); err != nil {
		t.Fatal(err)
	}
	return out.Bytes(), res, nil
}

// TestStreamedSameModel: the streamed estimator writes, byte for byte, the
// model that Estimate and format.Write give, and the same report, for
// every method and several orders, with a budget small enough that every
// sort spills runs to disk, and with one that links in memory, the orders
// linked after the spool or (a Linker) while it reads the orders above
// them; and it leaves no file behind.
func TestStreamedSameModel(t *testing.T) {
	limit := 1500
	if testing.Short() {
		limit = 800
	}
	train, _ := sotu(t, limit)
	c := count(t, 5, train)
	opts := []Options{
		{Method: KneserNey}, {Method: Katz}, {Method: Absolute}, {Method: Absolute, AutoDiscount: true},
		{Method: WittenBell}, {Method: Katz, KatzThreshold: 2},
	}
	spilled := false
	for _, o := range opts {
		for _, order := range []int{1, 2, 3, 5} {
			opt := o
			opt.Order = order
			cc := *c
			cc.Levels = c.Levels[:order]
			want, wrep, err := Estimate(&cc, opt)
			if err != nil {
				t.Fatal(err)
			}
			wantBytes, err := format.Marshal(want)
			if err != nil {
				t.Fatal(err)
			}
			// 16 KiB: every suffix found by sorts on disk; 64 MiB:
			// by links in memory.
			for _, run := range []struct {
				memory int64
				ahead  bool
			}{{16 << 10, true}, {64 << 20, false}, {64 << 20, true}, {linkOnlyBudget(t, &cc, opt), true}} {
				memory := run.memory
				got, res, err := streamedAhead(t, &cc, opt, memory, run.ahead)
				if err != nil {
					t.Fatalf("%s order %d: %v", opt.Method, order, err)
				}
				if !bytes.Equal(got, wantBytes) {
					t.Errorf("%s (auto %v, K %d) order %d, budget %d, linker %v: streamed model of %d bytes differs from the in-memory one of %d", opt.Method, opt.AutoDiscount, opt.KatzThreshold, order, memory, run.ahead, len(got), len(wantBytes))
				}
				if !reflect.DeepEqual(res.Report, wrep) {
					t.Errorf("%s order %d, budget %d: report %+v, in memory %+v", opt.Method, order, memory, res.Report, wrep)
				}
				if res.Linked != (order == 1 || memory > 16<<10) {
					t.Errorf("%s order %d, budget %d: linked in memory %v", opt.Method, order, memory, res.Linked)
				}
				// The linker's links are taken wherever there is
				// something to link.
				if ahead := run.ahead && res.Linked && (order >= 3 || opt.Method == KneserNey && order >= 2); res.LinkedAhead != ahead {
					t.Errorf("%s order %d, budget %d, linker %v: linked as spooled %v", opt.Method, order, memory, run.ahead, res.LinkedAhead)
				}
				spilled = spilled || res.Runs > 1
			}
		}
	}
	if !spilled {
		t.Error("no sort spilled: the budget is meant to force runs on disk")
	}
}

// linkOnlyBudget returns the budget that holds c's links (linkBytes) and
// no more: a Linker's links are then taken once every order is linked, not
// while the orders below are estimated (overlapBytes).
func linkOnlyBudget(t *testing.T, c *counts.Counts, opt Options) int64 {
	t.Helper()
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	sp, err := counts.Spool(opt.Order, []counts.Source{{Name: "counts.bin", R: &bin}}, t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	s := &streamer{sp: sp, opt: opt, N: opt.Order}
	if opt.Order >= 2 && s.overlapBytes() <= s.linkBytes() {
		t.Fatalf("order %d: links and an order's probabilities at once take %d bytes, the links alone %d", opt.Order, s.overlapBytes(), s.linkBytes())
	}
	return max(s.linkBytes(), 1)
}

// The budget of links and estimates at once: the largest of one order's
// links and one order's probabilities, together. Entries 10, 20, 30, no
// vocabulary (so every entry might begin with <s>): linking order 2
// (Kneser-Ney) holds 4*10 + 4*1 + 4*20 + 4*11 + 4*10 + 8*10 = 288 bytes;
// linking order 3, the top, 4*20 + 4*11 + 4*20 + 8*20 = 364, the most;
// order 3's estimate 8*20 = 160. With </s> counted 5 times, at most 5
// entries of an order begin with <s>: order 3's link holds
// 4*20 + 4*11 + 4*20 + 8*5 = 244.
func TestOverlapBytes(t *testing.T) {
	s := &streamer{sp: &counts.Spooled{Entries: []uint64{10, 20, 30}}, opt: Options{Method: KneserNey}, N: 3}
	if got, want := s.linkBytes(), int64(364); got != want {
		t.Errorf("linkBytes %d, want %d", got, want)
	}
	if got, want := s.overlapBytes(), int64(364+160); got != want {
		t.Errorf("overlapBytes %d, want %d", got, want)
	}
	vocab := []string{"</s>", "<s>", "a", "b", "c", "d", "e", "f", "g", "h"}
	unigrams := []uint64{5, 0, 1, 1, 1, 1, 1, 1, 1, 1}
	s.sp = &counts.Spooled{Vocab: vocab, Unigrams: unigrams, Entries: []uint64{10, 20, 30}}
	if got, want := s.linkBytesAt(3), int64(244); got != want {
		t.Errorf("linkBytesAt(3) with </s> counted 5 times: %d, want %d", got, want)
	}
}

// linkBytesAt bounds the arrays links.order holds, order by order, on
// counted text (where every n-gram beginning with <s> starts a sentence
// that </s> ends), for each method's links.
func TestLinkBytesBoundWhatLinkHolds(t *testing.T) {
	var text, bin bytes.Buffer
	if err := corpus.Generate(&text, 5, 600, 400); err != nil {
		t.Fatal(err)
	}
	if _, err := counts.Count(context.Background(), counts.Options{Order: 5}, []counts.Input{{Name: "text", R: &text}}, &bin); err != nil {
		t.Fatal(err)
	}
	for _, m := range []Method{KneserNey, WittenBell} {
		opt := Options{Method: m, Order: 5}
		sp, err := counts.Spool(5, []counts.Source{{Name: "counts.bin", R: bytes.NewReader(bin.Bytes())}}, t.TempDir())
		if err != nil {
			t.Fatal(err)
		}
		s := newStreamer(context.Background(), sp, opt, StreamOptions{Dir: t.TempDir()}, nil)
		l := s.newLinks()
		for k := 2; k <= 5; k++ {
			if err := l.order(k); err != nil {
				t.Fatal(err)
			}
			if bound := s.linkBytesAt(k); l.held[k] > bound || l.held[k] == 0 {
				t.Errorf("%s, order %d: linking held %d bytes, linkBytesAt bounds it at %d", m, k, l.held[k], bound)
			}
		}
		s.cleanup()
	}
}

// TestStreamedRefusesOpenCounts: counts whose n-gram lacks its suffix or
// prefix are an error, not a model, also when a Linker found it as the
// counts were spooled (ahead); no column is left behind.
func TestStreamedRefusesOpenCounts(t *testing.T) {
	for _, c := range []struct{ name, text string }{
		{"suffix", "3\ta\n3\tb\n2\t</s>\n1\t<s> a\n1\ta b\n1\tb </s>\n1\t<s> a b\n1\tz a b\n"},
		{"prefix", "3\ta\n3\tb\n2\t</s>\n1\t<s> a\n1\ta b\n1\tb </s>\n1\ta b </s>\n1\t<s> b </s>\n1\tb </s> \n"},
		{"suffix ahead", "3\ta\n3\tb\n2\t</s>\n1\t<s> a\n1\ta b\n1\tb </s>\n1\t<s> a b\n1\tz a b\n"},
		{"prefix ahead", "3\ta\n3\tb\n2\t</s>\n1\t<s> a\n1\ta b\n1\tb </s>\n1\ta b </s>\n1\t<s> b </s>\n1\tb </s> \n"},
	} {
		name := c.name
		dir := t.TempDir()
		opt := Options{Method: KneserNey, Order: 3}
		so := StreamOptions{Memory: 1 << 20, Dir: dir}
		var done func(*counts.Spooled)
		var started func(*counts.Tail)
		if strings.HasSuffix(name, "ahead") {
			so.Linker = StartLinker(context.Background(), opt, so)
			done, started = so.Linker.Spooled, so.Linker.Started
		}
		sp, err := counts.SpoolTail(3, []counts.Source{{Name: "c.txt", R: bytes.NewBufferString(c.text)}}, dir, done, started)
		if err != nil {
			continue // refused while reading: fine too
		}
		sw, err := format.NewStreamWriter(dir, sp.Vocab, sp.Entries)
		if err != nil {
			t.Fatal(err)
		}
		res, err := EstimateStreamed(context.Background(), sp, opt, so, sw)
		sw.Close()
		if err == nil {
			t.Errorf("%s missing: a model was estimated (linked as spooled: %v)", name, res.LinkedAhead)
		}
		left, _ := os.ReadDir(dir)
		for _, e := range left {
			if e.Name() != "order-2.records" && e.Name() != "order-3.records" {
				t.Errorf("%s: %s left behind", name, e.Name())
			}
		}
	}
}

// The streamed estimator writes the pinned (interpolated) Kneser-Ney only:
// asked for back-off unigrams (a pruned model's form) it refuses rather
// than write the other form silently.
func TestStreamedRefusesUnigramsBackedOff(t *testing.T) {
	c := count(t, 2, []string{"a b", "b a", "a a b"})
	_, _, err := streamed(t, c, Options{Method: KneserNey, Order: 2, UnigramsBackedOff: true}, 1<<20)
	if err == nil || !strings.Contains(err.Error(), "interpolated form only") {
		t.Errorf("got %v, want a refusal", err)
	}
}

// Linked in memory, Kneser-Ney gives n-grams that begin with <s> their raw
// counts also where no n-gram of the next order extends them and they sort
// after every one that is extended: words of digits sort before <s>, and
// the trigram "<s> 9 </s>" is dropped, so the bigram "<s> 9", last of its
// order, has no child. The model is the in-memory one, byte for byte.
func TestStreamedLinkedRawCountsLast(t *testing.T) {
	c := count(t, 3, []string{"1 2", "2 1 2", "9", "9", "1"})
	var text bytes.Buffer
	if _, err := c.WriteTo(&text); err != nil {
		t.Fatal(err)
	}
	var kept []string
	for _, line := range strings.SplitAfter(text.String(), "\n") {
		if !strings.HasSuffix(line, "<s> 9 </s>\n") {
			kept = append(kept, line)
		}
	}
	if len(kept) != strings.Count(text.String(), "\n") {
		t.Fatalf("the trigram <s> 9 </s> is not in the counts:\n%s", text.String())
	}
	cc, err := counts.Load(3, []counts.Source{{Name: "c.txt", R: strings.NewReader(strings.Join(kept, ""))}})
	if err != nil {
		t.Fatal(err)
	}
	opt := Options{Method: KneserNey, Order: 3}
	want, _, err := Estimate(cc, opt)
	if err != nil {
		t.Fatal(err)
	}
	wantBytes, err := format.Marshal(want)
	if err != nil {
		t.Fatal(err)
	}
	got, res, err := streamed(t, cc, opt, 1<<20)
	if err != nil {
		t.Fatal(err)
	}
	if !res.Linked {
		t.Fatal("not linked in memory")
	}
	if !bytes.Equal(got, wantBytes) {
		t.Error("the model linked in memory differs from the in-memory one")
	}
}

// failingSink fails on entry fail and counts the entries it was given.
type failingSink struct {
	n, fail int
}

func (f *failingSink) Add([]uint32, uint32, float32, float32, uint64) error {
	f.n++
	if f.n == f.fail {
		return fmt.Errorf("sink full at entry %d", f.n)
	}
	return nil
}

// The sink runs on a goroutine of its own: an error it gives, early (in
// the first batch) or on the very last entry, is the estimate's error,
// and EstimateStreamed returns only when the sink is done with.
func TestStreamedSinkError(t *testing.T) {
	train, _ := sotu(t, 300)
	c := count(t, 3, train)
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	total := 0
	for _, l := range c.Levels {
		total += len(l.Counts)
	}
	for _, fail := range []int{1, total / 2, total} {
		dir := t.TempDir()
		sp, err := counts.Spool(3, []counts.Source{{Name: "c.bin", R: bytes.NewReader(bin.Bytes())}}, dir)
		if err != nil {
			t.Fatal(err)
		}
		sink := &failingSink{fail: fail}
		_, err = EstimateStreamed(context.Background(), sp, Options{Method: KneserNey, Order: 3}, StreamOptions{Memory: 1 << 20, Dir: dir}, sink)
		want := fmt.Sprintf("sink full at entry %d", fail)
		if err == nil || err.Error() != want {
			t.Errorf("sink failing at entry %d of %d: got %v", fail, total, err)
		}
		if sink.n < fail {
			t.Errorf("sink failing at entry %d: given %d entries", fail, sink.n)
		}
	}
	// The same of the sink of the top order (StreamOptions.Top), linked
	// in memory and sorted on disk.
	top := len(c.Levels[2].Counts)
	for _, memory := range []int64{16 << 10, 1 << 20} {
		for _, fail := range []int{1, top / 2, top} {
			dir := t.TempDir()
			sp, err := counts.Spool(3, []counts.Source{{Name: "c.bin", R: bytes.NewReader(bin.Bytes())}}, dir)
			if err != nil {
				t.Fatal(err)
			}
			topSink := &failingSink{fail: fail}
			_, err = EstimateStreamed(context.Background(), sp, Options{Method: KneserNey, Order: 3}, StreamOptions{Memory: memory, Dir: dir, Top: topSink}, &failingSink{})
			want := fmt.Sprintf("sink full at entry %d", fail)
			if err == nil || err.Error() != want {
				t.Errorf("budget %d, top-order sink failing at entry %d of %d: got %v", memory, fail, top, err)
			}
		}
	}
}
