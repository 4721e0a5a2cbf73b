package beamcount

import (
	"bytes"
	"compress/gzip"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/testing/ptest"
	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
	"github.com/klauspost/compress/zstd"

	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/input"
	"ingot/compile/vocab"
	"ingot/format"
)

// The tests run the pipeline on Beam's Prism runner, in this process.
func TestMain(m *testing.M) { ptest.Main(m) }

// sotu returns the first n sentences of the bundled State of the Union
// corpus (testdata/sotu at the root of the main module).
func sotu(t testing.TB, n int) []string {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "..", "..", "testdata", "sotu", "sotu.txt.zst"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	z, err := zstd.NewReader(f)
	if err != nil {
		t.Fatal(err)
	}
	defer z.Close()
	var b bytes.Buffer
	if _, err := b.ReadFrom(z); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimRight(b.String(), "\n"), "\n")
	if n < len(lines) {
		lines = lines[:n]
	}
	return lines
}

// writeParts splits the sentences into three files of the kinds a user
// feeds the pipeline: plain text, gzip and zstd.
func writeParts(t testing.TB, dir string, lines []string) []string {
	t.Helper()
	third := len(lines) / 3
	parts := [][]string{lines[:third], lines[third : 2*third], lines[2*third:]}
	names := []string{"part-a.txt", "part-b.txt.gz", "part-c.txt.zst"}
	var paths []string
	for i, p := range parts {
		text := []byte(strings.Join(p, "\n") + "\n")
		var buf bytes.Buffer
		switch {
		case strings.HasSuffix(names[i], ".gz"):
			w := gzip.NewWriter(&buf)
			w.Write(text)
			w.Close()
		case strings.HasSuffix(names[i], ".zst"):
			w, _ := zstd.NewWriter(&buf)
			w.Write(text)
			w.Close()
		default:
			buf.Write(text)
		}
		path := filepath.Join(dir, names[i])
		if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		paths = append(paths, path)
	}
	return paths
}

// oneMachine counts the files as 'ingot count' does.
func oneMachine(t testing.TB, order int, minWordCount uint64, l *vocab.List, paths []string) *counts.Counts {
	t.Helper()
	c, err := counts.NewCounter(order)
	if err != nil {
		t.Fatal(err)
	}
	if l != nil {
		c.UseVocabulary(l)
	}
	for _, p := range paths {
		r, err := input.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		if err := c.AddText(p, r); err != nil {
			t.Fatal(err)
		}
		r.Close()
	}
	return c.Counts(minWordCount)
}

// runPipeline runs the pipeline and loads the shards it wrote.
func runPipeline(t testing.TB, o Options) *counts.Counts {
	t.Helper()
	if err := o.Check(); err != nil {
		t.Fatal(err)
	}
	p, s := beam.NewPipelineWithRoot()
	Build(s, o)
	if err := ptest.Run(p); err != nil {
		t.Fatal(err)
	}
	var sources []counts.Source
	for i := 0; i < o.Shards; i++ {
		name := ShardName(o.Output, i, o.Shards)
		b, err := os.ReadFile(name)
		if err != nil {
			t.Fatalf("shard %d: %v", i, err)
		}
		if !counts.IsBinary(b) {
			t.Fatalf("%s is not a binary count file", name)
		}
		sources = append(sources, counts.Source{Name: name, R: bytes.NewReader(b)})
	}
	leftovers, _ := filepath.Glob(o.Output + "*.partial")
	if len(leftovers) > 0 {
		t.Errorf("temporary shards left behind: %v", leftovers)
	}
	c, err := counts.Load(o.Order, sources)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// model compiles counts into model bytes the way 'ingot compile' does.
func model(t testing.TB, c *counts.Counts, order int, method estimate.Method) []byte {
	t.Helper()
	tab, _, err := estimate.Estimate(c, estimate.Options{Method: method, Order: order})
	if err != nil {
		t.Fatal(err)
	}
	b, err := format.Marshal(tab)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func sameModels(t testing.TB, got, want *counts.Counts, order int) {
	t.Helper()
	// Links are derived from the levels (one side loads them, the other
	// does not); the counts themselves must be equal.
	if d := cmp.Diff(want, got, cmpopts.IgnoreFields(counts.Counts{}, "Links")); d != "" {
		t.Fatalf("pipeline counts differ from one machine's (-one machine +pipeline):\n%.3000s", d)
	}
	for _, m := range []estimate.Method{estimate.KneserNey, estimate.Katz} {
		if !bytes.Equal(model(t, got, order, m), model(t, want, order, m)) {
			t.Errorf("%v: the model compiled from the shards differs from the one compiled from one machine's counts", m)
		}
	}
}

// The model compiled from the pipeline's shards is the model compiled from
// 'ingot count' on the same files: the same counts, the same bytes.
func TestShardsCompileToTheSameModel(t *testing.T) {
	dir := t.TempDir()
	paths := writeParts(t, dir, sotu(t, 6000))
	got := runPipeline(t, Options{Order: 4, Input: filepath.Join(dir, "part-*"), Output: filepath.Join(dir, "out", "sotu"), Shards: 3})
	sameModels(t, got, oneMachine(t, 4, 1, nil, paths), 4)
}

// The minimum word count needs the word counts of every file first (a side
// input); the result is still that of one machine.
func TestMinWordCountAsOneMachine(t *testing.T) {
	dir := t.TempDir()
	paths := writeParts(t, dir, sotu(t, 3000))
	got := runPipeline(t, Options{Order: 3, Input: filepath.Join(dir, "part-*"), Output: filepath.Join(dir, "sotu"), Shards: 2, MinWordCount: 3})
	want := oneMachine(t, 3, 3, nil, paths)
	if _, ok := want.ID("<unk>"); !ok {
		t.Fatal("the minimum word count replaced nothing: the test would prove nothing")
	}
	sameModels(t, got, want, 3)
}

// With a fixed word list every other word is <unk>, in the pipeline as in
// 'ingot count --vocabulary'.
func TestVocabularyAsOneMachine(t *testing.T) {
	dir := t.TempDir()
	lines := sotu(t, 3000)
	paths := writeParts(t, dir, lines)
	words := map[string]bool{}
	for _, l := range lines[:100] {
		for _, w := range strings.Fields(l) {
			words[w] = true
		}
	}
	var list []string
	for w := range words {
		list = append(list, w)
	}
	list = append(list, "heron-hide") // listed, never seen
	l, err := vocab.New(list)
	if err != nil {
		t.Fatal(err)
	}
	got := runPipeline(t, Options{Order: 3, Input: filepath.Join(dir, "part-*"), Output: filepath.Join(dir, "sotu"), Shards: 2, Vocabulary: l.Words()})
	sameModels(t, got, oneMachine(t, 3, 1, l, paths), 3)
}

// A marker inside the text fails the pipeline with the file and line, as it
// fails 'ingot count'.
func TestBadTextNamesFileAndLine(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "bad.txt")
	os.WriteFile(path, []byte("turn the camera on\nnavigate to </s> the fen\n"), 0o644)
	p, s := beam.NewPipelineWithRoot()
	Build(s, Options{Order: 2, Input: path, Output: filepath.Join(dir, "x"), Shards: 1})
	err := ptest.Run(p)
	if err == nil || !strings.Contains(err.Error(), "bad.txt:2") {
		t.Fatalf("got %v, want an error naming bad.txt:2", err)
	}
}

func TestCheckNamesTheOption(t *testing.T) {
	good := Options{Order: 3, Input: "x", Output: "y", Shards: 1}
	for _, c := range []struct {
		change func(*Options)
		want   string
	}{
		{func(o *Options) { o.Order = 0 }, "--order"},
		{func(o *Options) { o.Order = 11 }, "--order"},
		{func(o *Options) { o.Input = "" }, "--input"},
		{func(o *Options) { o.Output = "" }, "--output"},
		{func(o *Options) { o.Shards = 0 }, "--shards"},
		{func(o *Options) { o.MinWordCount = -1 }, "--min-word-count"},
		{func(o *Options) { o.MinWordCount = 2; o.Vocabulary = []string{"a"} }, "--min-word-count"},
		{func(o *Options) { o.Vocabulary = []string{"a", "a"} }, "--vocabulary"},
	} {
		o := good
		c.change(&o)
		if err := o.Check(); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: got %v, want an error naming %s", o, err, c.want)
		}
	}
	if err := good.Check(); err != nil {
		t.Errorf("good options refused: %v", err)
	}
}
