package inspect

import (
	"encoding/hex"
	"fmt"
	"math"

	"ingot/compile/tables"
	"ingot/format"
)

// Summary is what a model file says about itself: its header, its section
// directory and its build information. Everything in it is read at open or
// from the small sections, so it costs the same for any model size.
type Summary struct {
	// FileBytes is the file's length, which the header records too.
	FileBytes int64 `json:"file_bytes"`
	// MagicOK is true when the file starts with the model magic; a file
	// without it does not open, so a Summary always has it.
	MagicOK bool `json:"magic_ok"`
	// FormatVersion is the version in the header: 1, or 2 with codebooks.
	FormatVersion int `json:"format_version"`
	// Sections is the directory, in file order.
	Sections []Section `json:"sections"`

	Order          int `json:"order"`
	VocabularySize int `json:"vocabulary_size"`
	// NGrams holds the entries per order, unigrams first.
	NGrams []int `json:"ngrams"`
	// Method names the estimator recorded in the build information.
	Method string `json:"method"`
	// Discounts holds, per order (unigrams first), the discount parameters
	// by name; an order without any is null.
	Discounts []map[string]Number `json:"discounts"`
	// RulesApplied lists the corner-case rules the estimator applied.
	RulesApplied []string `json:"rules_applied"`
	// BuildOptions holds the build options as given, name to value.
	BuildOptions map[string]string `json:"build_options"`
	// History lists the steps applied after estimation (cutoffs, pruning,
	// quantization), oldest first.
	History []string `json:"history"`
	// Commands lists, oldest first, the commands that wrote the model:
	// command line, size budget and SHA-256 digests of their inputs.
	Commands []tables.Command `json:"commands"`
	// Quantization describes the codebooks; nil when no column is quantized.
	Quantization *Quantization `json:"quantization"`
	// EmptyContextLog10Backoff is log10 of the weight of the uniform
	// distribution under the empty context, folded into the unigrams.
	EmptyContextLog10Backoff Number `json:"empty_context_log10_backoff"`
	ToolVersion              string `json:"tool_version"`
	// SuffixClosed is the writer's flag: every stored k-gram's (k-1)-word
	// suffix is stored too.
	SuffixClosed bool `json:"suffix_closed"`
	// ContentDigest is the SHA-256 content digest of the header, in hex.
	ContentDigest string `json:"content_digest"`
	// Signature says whether the file carries a signature. It is not
	// checked here.
	Signature Signature `json:"signature"`
}

// Section is one entry of the section directory.
type Section struct {
	// Index is the entry's position in the directory.
	Index int `json:"index"`
	// Kind is the kind number; KindName its name ("probabilities").
	Kind     int    `json:"kind"`
	KindName string `json:"kind_name"`
	// Name names the section, with its order for per-order sections
	// ("probabilities of order 2").
	Name     string `json:"name"`
	Order    int    `json:"order"`
	Encoding string `json:"encoding"`
	Offset   int64  `json:"offset"`
	Length   int64  `json:"length"`
	// Checksum is the CRC-32C the directory records, 8 hex digits.
	Checksum string `json:"checksum"`
}

// Quantization describes a quantized model: the settings recorded at build
// time and, per order, the codebook sizes found in the file.
type Quantization struct {
	// Trainer, Bits and BackoffBits are as recorded in the build
	// information (empty and 0 when it records none).
	Trainer     string           `json:"trainer"`
	Bits        int              `json:"bits"`
	BackoffBits int              `json:"backoff_bits"`
	Orders      []QuantizedOrder `json:"orders"`
}

// QuantizedOrder is the quantization of one order.
type QuantizedOrder struct {
	Order int `json:"order"`
	// ProbLevels and BackoffLevels are the sizes of the order's codebooks
	// in the file; 0 means the column is stored as plain float32.
	ProbLevels    int `json:"prob_levels"`
	BackoffLevels int `json:"backoff_levels"`
	// ProbMaxError and BackoffMaxError are the largest rounding errors
	// (log10) recorded at build time; Residual the largest |sum - 1| of a
	// context after rounding. Null when the build information has none.
	ProbMaxError    Number `json:"prob_max_error"`
	BackoffMaxError Number `json:"backoff_max_error"`
	Residual        Number `json:"residual"`
}

// Signature is whether the model is signed, and by which key.
type Signature struct {
	Signed bool `json:"signed"`
	// KeyID is the SHA-256 of the signer's public key, in hex; empty when
	// unsigned.
	KeyID string `json:"key_id,omitempty"`
}

// Status renders the signature for people: "signed (key id …)" or
// "unsigned".
func (s Signature) Status() string {
	if !s.Signed {
		return "unsigned"
	}
	return fmt.Sprintf("signed (key id %s)", s.KeyID)
}

// Summarize describes the model's header, directory and build information.
func Summarize(m *format.Model) Summary {
	info := m.Info()
	s := Summary{
		FileBytes:                m.Size(),
		MagicOK:                  true,
		FormatVersion:            m.Version(),
		Order:                    m.Order(),
		VocabularySize:           m.VocabSize(),
		Method:                   info.Method,
		RulesApplied:             nonNil(info.Fallbacks),
		BuildOptions:             info.Options,
		History:                  nonNil(info.History),
		Commands:                 nonNil(info.Commands),
		EmptyContextLog10Backoff: Number(info.EmptyContextLogBackoff),
		ToolVersion:              info.ToolVersion,
		SuffixClosed:             m.SuffixClosed(),
		Quantization:             quantization(m),
	}
	if s.BuildOptions == nil {
		s.BuildOptions = map[string]string{}
	}
	for i, sec := range m.Sections() {
		s.Sections = append(s.Sections, Section{
			Index:    i,
			Kind:     int(sec.Kind),
			KindName: sec.Kind.String(),
			Name:     sec.Name(),
			Order:    sec.Order,
			Encoding: sec.Encoding.String(),
			Offset:   sec.Offset,
			Length:   sec.Length,
			Checksum: fmt.Sprintf("%08x", sec.Checksum),
		})
	}
	for k := 1; k <= m.Order(); k++ {
		s.NGrams = append(s.NGrams, m.Count(k))
	}
	s.Discounts = make([]map[string]Number, len(info.Discounts))
	for i, d := range info.Discounts {
		if d == nil {
			continue
		}
		s.Discounts[i] = make(map[string]Number, len(d))
		for name, v := range d {
			s.Discounts[i][name] = Number(v)
		}
	}
	digest := m.Digest()
	s.ContentDigest = hex.EncodeToString(digest[:])
	if id, ok := m.Signed(); ok {
		s.Signature = Signature{Signed: true, KeyID: hex.EncodeToString(id[:])}
	}
	return s
}

// quantization describes the model's codebooks, or returns nil when no
// column is quantized and the build information records no quantization.
func quantization(m *format.Model) *Quantization {
	info := m.Info()
	rec := info.Quantization
	q := &Quantization{}
	if rec != nil {
		q.Trainer, q.Bits, q.BackoffBits = rec.Trainer, rec.Bits, rec.BackoffBits
	}
	quantized := rec != nil
	for k := 1; k <= m.Order(); k++ {
		o := QuantizedOrder{
			Order:         k,
			ProbLevels:    len(m.Codebook(k, false)),
			BackoffLevels: len(m.Codebook(k, true)),
		}
		o.ProbMaxError = recordedOrNaN(RecordedMaxError(info, k, false))
		o.BackoffMaxError = recordedOrNaN(RecordedMaxError(info, k, true))
		o.Residual = Number(math.NaN())
		if rec != nil && k <= len(rec.Residual) {
			o.Residual = Number(rec.Residual[k-1])
		}
		quantized = quantized || o.ProbLevels > 0 || o.BackoffLevels > 0
		q.Orders = append(q.Orders, o)
	}
	if !quantized {
		return nil
	}
	return q
}

// RecordedMaxError returns the largest rounding error (log10) of order k's
// probabilities (backoff false) or back-off weights that the build
// information records, and whether it records one. The values before
// rounding are not kept in a quantized file; this bound is what is known.
func RecordedMaxError(info tables.Info, k int, backoff bool) (float64, bool) {
	rec := info.Quantization
	if rec == nil {
		return 0, false
	}
	errs := rec.ProbMaxError
	if backoff {
		errs = rec.BackoffMaxError
	}
	if k < 1 || k > len(errs) {
		return 0, false
	}
	return errs[k-1], true
}

func recordedOrNaN(v float64, ok bool) Number {
	if !ok {
		return Number(math.NaN())
	}
	return Number(v)
}

// nonNil returns s, or an empty slice for nil, so that JSON shows [].
func nonNil[T any](s []T) []T {
	if s == nil {
		return []T{}
	}
	return s
}
