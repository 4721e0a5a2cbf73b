package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"ingot/format"
)

// inspectDemoModels quantizes the demo model to 8 bits.
func inspectDemoModels(t *testing.T, dir string) (plain, quantized string) {
	t.Helper()
	plain = demoModel(t, dir)
	quantized = filepath.Join(dir, "q.ingot")
	if code, _, e := ingot(t, "quantize", "--bits", "8", "-o", quantized, plain); code != 0 {
		t.Fatal(e)
	}
	return plain, quantized
}

func inspectJSONKeys(t *testing.T, out string) map[string]json.RawMessage {
	t.Helper()
	var keys map[string]json.RawMessage
	if err := json.Unmarshal([]byte(out), &keys); err != nil {
		t.Fatalf("not one JSON object: %v\n%s", err, out)
	}
	return keys
}

func TestInspectSummary(t *testing.T) {
	dir := t.TempDir()
	plain, quantized := inspectDemoModels(t, dir)
	for _, tc := range []struct {
		model string
		want  []string
	}{
		{plain, []string{"magic ok, format version 3", "kneser-ney", "discounts", "order 3: D1=",
			"rules applied", "suffix-closed   yes", "quantization    none", "signature       unsigned",
			"child starts", "CRC-32C"}},
		{quantized, []string{"format version 3", "trainer least-squares, 8-bit probabilities", "probability codebook",
			"packed codebook indexes", "quantized: probabilities 8 bits"}},
	} {
		code, out, e := ingot(t, "inspect", tc.model)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, e)
		}
		for _, w := range tc.want {
			if !strings.Contains(out, w) {
				t.Errorf("%s: output lacks %q:\n%s", filepath.Base(tc.model), w, out)
			}
		}
	}
	code, out, e := ingot(t, "inspect", "--json", plain)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	keys := inspectJSONKeys(t, out)
	for _, k := range []string{"model", "file_bytes", "magic_ok", "format_version", "sections", "order",
		"vocabulary_size", "ngrams", "method", "discounts", "rules_applied", "build_options", "history",
		"quantization", "empty_context_log10_backoff", "tool_version", "suffix_closed", "content_digest", "signature"} {
		if _, ok := keys[k]; !ok {
			t.Errorf("inspect --json lacks %q", k)
		}
	}
	m, err := format.Open(plain)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	var s struct {
		FileBytes int64 `json:"file_bytes"`
		NGrams    []int `json:"ngrams"`
		Sections  []struct {
			Name     string `json:"name"`
			Checksum string `json:"checksum"`
		} `json:"sections"`
		ContentDigest string `json:"content_digest"`
	}
	json.Unmarshal([]byte(out), &s)
	fi, _ := os.Stat(plain)
	digest := m.Digest()
	if s.FileBytes != fi.Size() || fmt.Sprint(s.NGrams) != fmt.Sprint([]int{m.Count(1), m.Count(2), m.Count(3)}) ||
		s.ContentDigest != fmt.Sprintf("%x", digest[:]) || len(s.Sections) != len(m.Sections()) {
		t.Errorf("summary %+v disagrees with the file", s)
	}
	for i, sec := range m.Sections() {
		if s.Sections[i].Name != sec.Name() || s.Sections[i].Checksum != fmt.Sprintf("%08x", sec.Checksum) {
			t.Errorf("section %d: %+v, directory %v %08x", i, s.Sections[i], sec.Name(), sec.Checksum)
		}
	}
}

func TestInspectSigned(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	key := filepath.Join(dir, "release")
	if code, _, e := ingot(t, "keygen", "-o", key); code != 0 {
		t.Fatal(e)
	}
	if code, _, e := ingot(t, "sign", "--key", key+".key", m); code != 0 {
		t.Fatal(e)
	}
	code, out, e := ingot(t, "inspect", m)
	if code != 0 || !strings.Contains(out, "signature       signed (key id ") || !strings.Contains(out, "ingot verify --public-key") {
		t.Errorf("exit %d %s:\n%s", code, e, out)
	}
	_, out, _ = ingot(t, "inspect", "--json", m)
	var s struct {
		Signature struct {
			Signed bool   `json:"signed"`
			KeyID  string `json:"key_id"`
		} `json:"signature"`
	}
	json.Unmarshal([]byte(out), &s)
	if !s.Signature.Signed || len(s.Signature.KeyID) != 64 {
		t.Errorf("signature %+v", s.Signature)
	}
}

func TestInspectStats(t *testing.T) {
	dir := t.TempDir()
	plain, quantized := inspectDemoModels(t, dir)
	for _, model := range []string{plain, quantized} {
		code, out, e := ingot(t, "inspect", "--stats", "--json", model)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, e)
		}
		keys := inspectJSONKeys(t, out)
		for _, k := range []string{"model", "file_bytes", "ngrams", "total_ngrams", "bits_per_ngram", "shared_bytes", "sections", "orders"} {
			if _, ok := keys[k]; !ok {
				t.Errorf("inspect --stats --json lacks %q", k)
			}
		}
		var st struct {
			FileBytes    int64   `json:"file_bytes"`
			NGrams       []int   `json:"ngrams"`
			BitsPerNGram float64 `json:"bits_per_ngram"`
			Orders       []struct {
				Contexts     int `json:"contexts"`
				ProbCodebook *struct {
					Levels int     `json:"levels"`
					Step   float64 `json:"step"`
				} `json:"prob_codebook"`
				BackoffWeights *struct {
					Count int `json:"count"`
				} `json:"backoff_weights"`
			} `json:"orders"`
		}
		json.Unmarshal([]byte(out), &st)
		fi, _ := os.Stat(model)
		total := 0
		for _, n := range st.NGrams {
			total += n
		}
		if st.FileBytes != fi.Size() || len(st.NGrams) != 3 || math.Abs(st.BitsPerNGram-float64(st.FileBytes)*8/float64(total)) > 1e-9 {
			t.Errorf("%s: %d bytes (file %d), n-grams %v, %v bits per n-gram", model, st.FileBytes, fi.Size(), st.NGrams, st.BitsPerNGram)
		}
		if o := st.Orders[0]; o.Contexts < 1 || o.BackoffWeights == nil || o.BackoffWeights.Count != o.Contexts {
			t.Errorf("order 1 contexts %d, weights %+v", o.Contexts, o.BackoffWeights)
		}
		cb := st.Orders[2].ProbCodebook
		if model == quantized && (cb == nil || cb.Levels < 2 || cb.Levels > 256 || !(cb.Step > 0)) {
			t.Errorf("quantized order 3 codebook %+v", cb)
		}
		if model == plain && cb != nil {
			t.Errorf("plain model shows a codebook %+v", cb)
		}
		code, out, _ = ingot(t, "inspect", "--stats", model)
		for _, w := range []string{"bits per n-gram", "contexts", "codebooks", "sections"} {
			if code != 0 || !strings.Contains(out, w) {
				t.Errorf("inspect --stats text lacks %q:\n%s", w, out)
			}
		}
	}
}

// inspectDumped is one line of --dump.
type inspectDumped struct {
	NGram        string   `json:"ngram"`
	Order        int      `json:"order"`
	Log10Prob    *float64 `json:"log10_prob"`
	Log10Backoff *float64 `json:"log10_backoff"`
	ProbIndex    *int     `json:"prob_index"`
	BackoffIndex *int     `json:"backoff_index"`
}

func inspectDump(t *testing.T, args ...string) []inspectDumped {
	t.Helper()
	code, out, e := ingot(t, append([]string{"inspect", "--dump"}, args...)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	var lines []inspectDumped
	sc := bufio.NewScanner(strings.NewReader(out))
	for sc.Scan() {
		var d inspectDumped
		if err := json.Unmarshal(sc.Bytes(), &d); err != nil {
			t.Fatalf("line %d %q: %v", len(lines)+1, sc.Text(), err)
		}
		lines = append(lines, d)
	}
	return lines
}

// inspectStored lists a model's entries as format.ToTables reads them:
// "order|ngram" to the log10 probability and back-off weight (NaN at the
// highest order).
func inspectStored(t *testing.T, path string) map[string][2]float32 {
	t.Helper()
	m, err := format.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	tb, err := format.ToTables(m)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][2]float32{}
	for k := 1; k <= tb.Order(); k++ {
		for i := range tb.Len(k) {
			b := float32(math.NaN())
			if k < tb.Order() {
				b = tb.Levels[k-1].LogBackoff[i]
			}
			out[fmt.Sprintf("%d|%s", k, tb.Words(tb.Gram(k, i)))] = [2]float32{tb.Levels[k-1].LogProb[i], b}
		}
	}
	return out
}

// inspectAsStored maps dump lines back to the stored float32 values.
func inspectAsStored(lines []inspectDumped) map[string][2]float32 {
	out := map[string][2]float32{}
	for _, d := range lines {
		v := [2]float32{float32(math.Inf(-1)), float32(math.NaN())}
		if d.Log10Prob != nil {
			v[0] = float32(*d.Log10Prob)
		}
		if d.Log10Backoff != nil {
			v[1] = float32(*d.Log10Backoff)
		}
		out[fmt.Sprintf("%d|%s", d.Order, d.NGram)] = v
	}
	return out
}

func inspectSameValues(a, b map[string][2]float32) string {
	if len(a) != len(b) {
		return fmt.Sprintf("%d entries against %d", len(a), len(b))
	}
	for key, va := range a {
		vb, ok := b[key]
		if !ok {
			return fmt.Sprintf("%q missing", key)
		}
		for j := range va {
			if va[j] != vb[j] && !(math.IsNaN(float64(va[j])) && math.IsNaN(float64(vb[j]))) {
				return fmt.Sprintf("%q: %v against %v", key, va, vb)
			}
		}
	}
	return ""
}

func TestInspectDumpRoundTrips(t *testing.T) {
	dir := t.TempDir()
	plain, quantized := inspectDemoModels(t, dir)
	for _, model := range []string{plain, quantized} {
		lines := inspectDump(t, model)
		if d := inspectSameValues(inspectStored(t, model), inspectAsStored(lines)); d != "" || len(lines) != len(inspectAsStored(lines)) {
			t.Errorf("%s: dump differs from the stored entries: %s", filepath.Base(model), d)
		}
		m, err := format.Open(model)
		if err != nil {
			t.Fatal(err)
		}
		indexes := 0
		for _, d := range lines {
			if d.ProbIndex != nil {
				indexes++
				if cb := m.Codebook(d.Order, false); d.Log10Prob == nil { // -Inf, the unigram <s>
					if !math.IsInf(float64(cb[*d.ProbIndex]), -1) {
						t.Errorf("%q: null probability, but index %d names %v", d.NGram, *d.ProbIndex, cb[*d.ProbIndex])
					}
				} else if cb[*d.ProbIndex] != float32(*d.Log10Prob) {
					t.Errorf("%q: index %d names %v, not %v", d.NGram, *d.ProbIndex, cb[*d.ProbIndex], *d.Log10Prob)
				}
			}
			if d.BackoffIndex != nil {
				if cb := m.Codebook(d.Order, true); cb[*d.BackoffIndex] != float32(*d.Log10Backoff) {
					t.Errorf("%q: back-off index %d names %v, not %v", d.NGram, *d.BackoffIndex, cb[*d.BackoffIndex], *d.Log10Backoff)
				}
			}
			if d.NGram == "<s>" && d.Log10Prob != nil {
				t.Errorf("<s> has log10 probability %v, want null", *d.Log10Prob)
			}
		}
		m.Close()
		if (indexes > 0) != (model == quantized) {
			t.Errorf("%s: %d entries with codebook indexes", filepath.Base(model), indexes)
		}
	}
}

func TestInspectDumpPrefixAndOrder(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	all := inspectDump(t, m)
	for _, tc := range []struct {
		args   []string
		prefix string
		order  int
	}{
		{[]string{"--prefix", "turn the"}, "turn the", 0},
		{[]string{"--prefix", "<s>"}, "<s>", 0},
		{[]string{"--prefix", "navigate to", "--order", "3"}, "navigate to", 3},
		{[]string{"--order", "2"}, "", 2},
		{[]string{"--prefix", "the turn"}, "the turn", 0}, // not stored: nothing
	} {
		var want []inspectDumped
		p := strings.Fields(tc.prefix)
		for _, d := range all {
			w := strings.Fields(d.NGram)
			if len(w) >= len(p) && strings.Join(w[:len(p)], " ") == tc.prefix && (tc.order == 0 || d.Order == tc.order) {
				want = append(want, d)
			}
		}
		got := inspectDump(t, append(tc.args, m)...)
		if len(got) != len(want) || inspectSameValues(inspectAsStored(want), inspectAsStored(got)) != "" {
			t.Errorf("%v: %d entries, want %d (%s)", tc.args, len(got), len(want), inspectSameValues(inspectAsStored(want), inspectAsStored(got)))
		}
		if tc.prefix != "the turn" && len(want) == 0 {
			t.Errorf("%v: the case selects nothing", tc.args)
		}
	}
}

func TestInspectNext(t *testing.T) {
	dir := t.TempDir()
	plain, quantized := inspectDemoModels(t, dir)
	type next struct {
		Context          []string `json:"context"`
		Unknown          []string `json:"unknown_words"`
		Candidates       int      `json:"candidates"`
		TotalProbability float64  `json:"total_probability"`
		Predictions      []struct {
			Word         string  `json:"word"`
			Log10        float64 `json:"log10"`
			Probability  float64 `json:"probability"`
			MatchedOrder int     `json:"matched_order"`
			Stored       bool    `json:"stored"`
		} `json:"predictions"`
	}
	for _, model := range []string{plain, quantized} {
		for _, context := range []string{"", "<s>", "<s> turn", "turn the", "navigate to the zebra"} {
			// Every word: the probabilities sum to one (law of total probability).
			code, out, e := ingot(t, "inspect", "--json", "--next", context, "--top", "1000000", model)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, e)
			}
			var n next
			if err := json.Unmarshal([]byte(out), &n); err != nil {
				t.Fatal(err)
			}
			sum := 0.0
			for _, p := range n.Predictions {
				sum += p.Probability
			}
			if len(n.Predictions) != n.Candidates || math.Abs(sum-1) > 1e-5 {
				t.Errorf("%s %q: %d predictions of %d words sum to %v", filepath.Base(model), context, len(n.Predictions), n.Candidates, sum)
			}
			if !sort.SliceIsSorted(n.Predictions, func(i, j int) bool { return n.Predictions[i].Log10 > n.Predictions[j].Log10 }) {
				t.Errorf("%q: not ranked", context)
			}
		}
	}
	code, out, e := ingot(t, "inspect", "--json", "--next", "<s> turn", "--top", "3", plain)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	var n next
	json.Unmarshal([]byte(out), &n)
	if len(n.Predictions) != 3 || n.Predictions[0].Word != "the" || !n.Predictions[0].Stored || n.Predictions[0].MatchedOrder != 3 {
		t.Errorf("top 3 after <s> turn: %+v", n.Predictions)
	}
	_, ex, _ := ingot(t, "explain", "--json", plain, "<s> turn the")
	var exv struct{ Log10 float64 }
	json.Unmarshal([]byte(ex), &exv)
	if exv.Log10 != n.Predictions[0].Log10 {
		t.Errorf("next gives log10 %v, explain %v", n.Predictions[0].Log10, exv.Log10)
	}
	code, out, _ = ingot(t, "inspect", "--next", "turn zebra", plain)
	for _, w := range []string{`"zebra" is not in the vocabulary: looked up as <unk>`, "rank", "backed off to order", "of 158 words shown"} {
		if code != 0 || !strings.Contains(out, w) {
			t.Errorf("inspect --next text lacks %q:\n%s", w, out)
		}
	}
}

func TestExplainShowsQuantization(t *testing.T) {
	dir := t.TempDir()
	plain, quantized := inspectDemoModels(t, dir)
	// "navigate turn </s>": backs off from "turn" (a quantized weight) to the
	// unigram "</s>" (quantized with a codebook of its own).
	code, out, e := ingot(t, "explain", "--json", quantized, "navigate turn </s>")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	type quant struct {
		CodebookIndex  int      `json:"codebook_index"`
		CodebookLevels int      `json:"codebook_levels"`
		QuantizedLog10 float64  `json:"quantized_log10"`
		MaxError       *float64 `json:"max_rounding_error_recorded"`
	}
	var ex struct {
		StoredLog10  float64 `json:"stored_log10"`
		Quantization *quant  `json:"quantization"`
		Backoffs     []struct {
			Log10Weight  float64 `json:"log10_backoff"`
			Quantization *quant  `json:"quantization"`
		} `json:"backoffs"`
	}
	json.Unmarshal([]byte(out), &ex)
	if ex.Quantization == nil || ex.Quantization.QuantizedLog10 != ex.StoredLog10 || len(ex.Backoffs) != 1 {
		t.Fatalf("explanation %s", out)
	}
	q := ex.Backoffs[0].Quantization
	if q == nil || q.QuantizedLog10 != ex.Backoffs[0].Log10Weight || q.MaxError == nil || q.CodebookIndex >= q.CodebookLevels {
		t.Errorf("back-off quantization %+v in %s", q, out)
	}
	// A stored trigram: its probability is a codebook level.
	_, out, _ = ingot(t, "explain", "--json", quantized, "<s> turn the")
	ex.Quantization = nil
	json.Unmarshal([]byte(out), &ex)
	if q := ex.Quantization; q == nil || q.QuantizedLog10 != ex.StoredLog10 || q.MaxError == nil || !(*q.MaxError >= 0) {
		t.Errorf("matched quantization %+v in %s", q, out)
	}
	_, out, _ = ingot(t, "explain", quantized, "navigate turn </s>")
	for _, w := range []string{"weight quantized: stored as codebook index", "(recorded)", "probability quantized: stored as codebook index"} {
		if !strings.Contains(out, w) {
			t.Errorf("explain text lacks %q:\n%s", w, out)
		}
	}
	// An unquantized model keeps the old output.
	_, out, _ = ingot(t, "explain", "--json", plain, "navigate turn </s>")
	if strings.Contains(out, "quantization") {
		t.Errorf("plain model explained with quantization:\n%s", out)
	}
}

func TestInspectBadUsage(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"--stats", "--dump", m}, "--stats, --dump and --next do not combine"},
		{[]string{"--order", "2", m}, "--order and --prefix go with --dump"},
		{[]string{"--top", "3", m}, "--top goes with --next"},
		{[]string{"--next", "turn", "--top", "0", m}, "--top 0 must be at least 1"},
		{[]string{"--dump", "--order", "4", m}, "--order 4 outside the model's orders 1..3"},
		{[]string{"--dump", "--prefix", "turn zebra", m}, `--prefix: prefix word "zebra" is not in the vocabulary`},
		{[]string{filepath.Join(dir, "missing.ingot")}, "missing.ingot"},
		{[]string{m, m}, "argument(s) given; usage: ingot "},
	} {
		code, out, e := ingot(t, append([]string{"inspect"}, tc.args...)...)
		if code != 2 || !strings.Contains(e, tc.want) || strings.Count(e, "\n") != 1 || out != "" {
			t.Errorf("%v: exit %d, stdout %q, stderr %q; want exit 2 and %q", tc.args, code, out, e, tc.want)
		}
	}
}
