package inspect

import (
	"crypto/ed25519"
	"encoding/hex"
	"encoding/json"
	"os"
	"testing"

	"github.com/google/go-cmp/cmp"

	"ingot/format"
)

// The directory of the golden file as spec/FORMAT.md §9 prints it.
func TestSummarizeGoldenMatchesSpecTable(t *testing.T) {
	s := Summarize(openGolden(t))
	type row struct {
		Kind, Order    int
		Offset, Length int64
		Checksum       string
	}
	want := []row{
		{1, 0, 480, 48, "fb729775"}, {2, 0, 528, 191, "576ff836"},
		{3, 0, 720, 48, "928d0622"}, {4, 0, 768, 43, "0880cea1"},
		{6, 1, 816, 44, "4087c8ef"}, {7, 1, 864, 44, "1e01b944"},
		{8, 1, 912, 48, "b20849e0"}, {5, 2, 960, 56, "ffd8e42c"},
		{6, 2, 1016, 56, "3d58588e"}, {7, 2, 1072, 56, "3e590bac"},
		{8, 2, 1128, 60, "76ce6d15"}, {5, 3, 1192, 28, "ef774ac8"},
		{6, 3, 1224, 28, "7183ae5a"},
	}
	var got []row
	for _, sec := range s.Sections {
		got = append(got, row{sec.Kind, sec.Order, sec.Offset, sec.Length, sec.Checksum})
		if sec.Encoding != "plain" {
			t.Errorf("%s: encoding %q", sec.Name, sec.Encoding)
		}
	}
	if d := cmp.Diff(want, got); d != "" {
		t.Errorf("directory differs from the spec's table (-spec +got):\n%s", d)
	}
	for _, c := range []struct {
		name      string
		got, want any
	}{
		{"file bytes", s.FileBytes, int64(1256)},
		{"magic", s.MagicOK, true},
		{"version", s.FormatVersion, 1},
		{"order", s.Order, 3},
		{"vocabulary", s.VocabularySize, 11},
		{"n-grams", s.NGrams, []int{11, 14, 7}},
		{"suffix-closed", s.SuffixClosed, true},
		{"signature", s.Signature.Status(), "unsigned"},
		{"quantization", s.Quantization == nil, true},
		{"section name", s.Sections[4].Name, "probabilities of order 1"},
	} {
		if !cmp.Equal(c.got, c.want) {
			t.Errorf("%s: %v, want %v", c.name, c.got, c.want)
		}
	}
	// The build info records "-Infinity", which JSON output shows as null.
	b, err := json.Marshal(s)
	if err != nil {
		t.Fatal(err)
	}
	var keys map[string]json.RawMessage
	json.Unmarshal(b, &keys)
	if string(keys["empty_context_log10_backoff"]) != "null" {
		t.Errorf("empty_context_log10_backoff = %s, want null", keys["empty_context_log10_backoff"])
	}
	for _, k := range []string{"file_bytes", "magic_ok", "format_version", "sections", "order", "vocabulary_size",
		"ngrams", "method", "discounts", "rules_applied", "build_options", "history", "quantization",
		"tool_version", "suffix_closed", "content_digest", "signature"} {
		if _, ok := keys[k]; !ok {
			t.Errorf("JSON lacks %q", k)
		}
	}
}

func TestSummarizeQuantizedAndSigned(t *testing.T) {
	plain, quantized := demoModels(t)
	if s := Summarize(plain); s.Quantization != nil || s.FormatVersion != 3 || s.Method != "kneser-ney" || len(s.Discounts) != 3 {
		t.Errorf("plain model: version %d, method %q, %d discount orders, quantization %+v",
			s.FormatVersion, s.Method, len(s.Discounts), s.Quantization)
	}
	s := Summarize(quantized)
	if s.FormatVersion != 3 || s.Quantization == nil {
		t.Fatalf("quantized model: version %d, quantization %v", s.FormatVersion, s.Quantization)
	}
	q := s.Quantization
	if q.Bits != 8 || q.BackoffBits != 8 || q.Trainer != "least-squares" || len(q.Orders) != 3 {
		t.Errorf("quantization %+v", q)
	}
	// Unigram probabilities have a codebook of their own; the top order has no back-offs.
	if o := q.Orders[0]; o.ProbLevels < 2 || o.ProbLevels > 256 || o.BackoffLevels < 2 || o.BackoffLevels > 256 {
		t.Errorf("order 1: %+v", o)
	}
	if o := q.Orders[2]; o.ProbLevels < 2 || o.ProbLevels > 256 || o.BackoffLevels != 0 || !(o.ProbMaxError > 0) {
		t.Errorf("order 3: %+v", o)
	}

	// Signing adds a section and keeps the digest.
	priv := ed25519.NewKeyFromSeed(make([]byte, ed25519.SeedSize))
	data, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	signed, err := format.Sign(data, priv)
	if err != nil {
		t.Fatal(err)
	}
	m, err := format.FromBytes(signed)
	if err != nil {
		t.Fatal(err)
	}
	id := format.KeyID(priv.Public().(ed25519.PublicKey))
	ss := Summarize(m)
	want := "signed (key id " + hex.EncodeToString(id[:]) + ")"
	if got := ss.Signature.Status(); got != want {
		t.Errorf("signature %q, want %q", got, want)
	}
	if before := Summarize(openGolden(t)); ss.ContentDigest != before.ContentDigest {
		t.Errorf("digest changed by signing: %s, was %s", ss.ContentDigest, before.ContentDigest)
	}
	if last := ss.Sections[len(ss.Sections)-1]; last.KindName != "signature" || last.Length != 104 {
		t.Errorf("last section %+v", last)
	}
}
