package main

import (
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/tables"
	"ingot/format"
	"ingot/inspect"
)

func newExplainCmd() *cobra.Command {
	var asJSON bool
	cmd := &cobra.Command{
		Use:   `explain [--json] MODEL w1 ... wn`,
		Short: "Show how P(wn | w1 ... wn-1) was computed",
		Long: `Show how the model computes P(wn | w1 ... wn-1): the longest stored n-gram
that matched and its stored log10 probability, each back-off weight applied
on the way down with the context it belongs to, and the final log10 and
probability. Start the words with <s> to ask about the start of a sentence.
A word outside the vocabulary is looked up as <unk>. The words may be given
as separate arguments or as one quoted argument.

In a quantized model, each quantized value (the matched probability, each
back-off weight) also shows the codebook index the file stores and the
largest rounding error of its order recorded at build time; the value before
rounding is not kept in the file. With --json such a value has a
"quantization" object: "codebook_index", "codebook_levels",
"quantized_log10" and "max_rounding_error_recorded" (null when none is
recorded).`,
		Example: `  ingot explain field.ingot the beacon on
  ingot explain field.ingot "<s> turn the beacon"
  ingot explain --json field.ingot the beacon on`,
		Args: cobra.MinimumNArgs(2),
		RunE: func(cmd *cobra.Command, args []string) error {
			words := strings.Fields(strings.Join(args[1:], " "))
			if len(words) == 0 {
				return fmt.Errorf("explain: no words given")
			}
			m, err := openModel(args[0])
			if err != nil {
				return err
			}
			defer m.Close()
			ids, unknown := lookup(m, words)
			ex := m.Explain(ids[:len(ids)-1], ids[len(ids)-1])
			return printExplanation(cmd.OutOrStdout(), args[0], m, ex, unknown, asJSON)
		},
	}
	cmd.Flags().BoolVar(&asJSON, "json", false, "print the explanation as JSON")
	return cmd
}

// lookup maps words to ids; words outside the vocabulary become <unk>, and
// <s> anywhere but first is looked up as <unk> too.
func lookup(m *format.Model, words []string) (ids []uint32, unknown []string) {
	for i, w := range words {
		id, ok := m.ID(w)
		if !ok || (id == m.StartID() && i > 0) {
			unknown = append(unknown, w)
			id = m.UnknownID()
		}
		ids = append(ids, id)
	}
	return ids, unknown
}

// words returns the words of ids, never nil.
func words(m *format.Model, ids []uint32) []string {
	s := make([]string, len(ids))
	for i, id := range ids {
		s[i] = m.Word(id)
	}
	return s
}

func join(m *format.Model, ids []uint32) string {
	s := make([]string, len(ids))
	for i, id := range ids {
		s[i] = m.Word(id)
	}
	return strings.Join(s, " ")
}

type backoffJSON struct {
	Context      []string              `json:"context"`
	Log10Backoff inspect.Number        `json:"log10_backoff"`
	Quantization *explainQuantizedJSON `json:"quantization,omitempty"`
}

// explainQuantizedJSON is how a quantized value is stored: the codebook
// index the file holds and the level it names. The value before rounding is
// not kept in the file; the build information records, per order, the
// largest rounding error (null when it records none).
type explainQuantizedJSON struct {
	CodebookIndex  int            `json:"codebook_index"`
	CodebookLevels int            `json:"codebook_levels"`
	QuantizedLog10 inspect.Number `json:"quantized_log10"`
	MaxError       *float64       `json:"max_rounding_error_recorded"`
}

// explainQuantized describes entry i of order k's probability (backoff false) or
// back-off weight when that column is quantized, or returns nil.
func explainQuantized(m *format.Model, k, i int, backoff bool) *explainQuantizedJSON {
	idx, ok := m.Index(k, i, backoff)
	if !ok {
		return nil
	}
	cb := m.Codebook(k, backoff)
	q := &explainQuantizedJSON{CodebookIndex: idx, CodebookLevels: len(cb), QuantizedLog10: inspect.Number(math.NaN())}
	if idx < len(cb) {
		q.QuantizedLog10 = inspect.Number(cb[idx])
	}
	if e, ok := inspect.RecordedMaxError(m.Info(), k, backoff); ok {
		q.MaxError = &e
	}
	return q
}

// explainQuantizedText renders q for the text explanation; what names the value.
func explainQuantizedText(q *explainQuantizedJSON, what string) string {
	bound := "not recorded"
	if q.MaxError != nil {
		bound = fmt.Sprintf("at most ±%.4g (recorded)", *q.MaxError)
	}
	return fmt.Sprintf("%s quantized: stored as codebook index %d (of %d levels); rounding error %s, the value before rounding is not kept",
		what, q.CodebookIndex, q.CodebookLevels, bound)
}

// explainAnyQuantized reports whether any column of the model is quantized.
func explainAnyQuantized(m *format.Model) bool {
	for k := 1; k <= m.Order(); k++ {
		if m.Codebook(k, false) != nil || m.Codebook(k, true) != nil {
			return true
		}
	}
	return false
}

func printExplanation(w io.Writer, model string, m *format.Model, ex format.Explanation, unknown []string, asJSON bool) error {
	word := m.Word(ex.Word)
	matched := ""
	var matchedQ *explainQuantizedJSON
	if ex.MatchedOrder > 0 {
		g := append(append([]uint32{}, ex.Context[len(ex.Context)-(ex.MatchedOrder-1):]...), ex.Word)
		matched = join(m, g)
		if i, ok := m.Find(g); ok {
			matchedQ = explainQuantized(m, ex.MatchedOrder, i, false)
		}
	}
	backoffQ := make([]*explainQuantizedJSON, len(ex.Backoffs))
	for j, b := range ex.Backoffs {
		if i, ok := m.Find(b.Context); ok {
			backoffQ[j] = explainQuantized(m, len(b.Context), i, true)
		}
	}
	if asJSON {
		v := struct {
			Model        string                `json:"model"`
			Context      []string              `json:"context"`
			Word         string                `json:"word"`
			Unknown      []string              `json:"unknown_words"`
			MatchedOrder int                   `json:"matched_order"`
			MatchedNGram string                `json:"matched_ngram"`
			StoredLog10  inspect.Number        `json:"stored_log10"`
			Backoffs     []backoffJSON         `json:"backoffs"`
			Log10        inspect.Number        `json:"log10"`
			Probability  inspect.Number        `json:"probability"`
			Quantization *explainQuantizedJSON `json:"quantization,omitempty"`
		}{model, words(m, ex.Context), word, append([]string{}, unknown...), ex.MatchedOrder, matched, inspect.Number(ex.StoredLogProb),
			[]backoffJSON{}, inspect.Number(ex.LogProb), inspect.Number(math.Pow(10, ex.LogProb)), matchedQ}
		for j, b := range ex.Backoffs {
			v.Backoffs = append(v.Backoffs, backoffJSON{words(m, b.Context), inspect.Number(b.LogBackoff), backoffQ[j]})
		}
		return writeJSON(w, v)
	}
	ctx := join(m, ex.Context)
	fmt.Fprintf(w, "P(%s | %s)\n", word, ctx)
	for _, u := range unknown {
		fmt.Fprintf(w, "  %q is not in the vocabulary: looked up as %s\n", u, tables.Unknown)
	}
	quantizedModel := explainAnyQuantized(m)
	for j, b := range ex.Backoffs {
		fmt.Fprintf(w, "  %-10s %q is stored but not followed by %q: back-off weight log10 %+.6f\n",
			"back off", join(m, b.Context), word, b.LogBackoff)
		if q := backoffQ[j]; q != nil {
			fmt.Fprintf(w, "  %-10s %s\n", "", explainQuantizedText(q, "weight"))
		} else if quantizedModel {
			fmt.Fprintf(w, "  %-10s weight stored as a 32-bit float (not quantized)\n", "")
		}
	}
	if ex.MatchedOrder == 0 {
		fmt.Fprintf(w, "  %q is not in the vocabulary\n", word)
	} else {
		fmt.Fprintf(w, "  %-10s order %d %q stored log10 %+.6f\n", "matched", ex.MatchedOrder, matched, ex.StoredLogProb)
		if matchedQ != nil {
			fmt.Fprintf(w, "  %-10s %s\n", "", explainQuantizedText(matchedQ, "probability"))
		} else if quantizedModel {
			fmt.Fprintf(w, "  %-10s probability stored as a 32-bit float (not quantized)\n", "")
		}
	}
	fmt.Fprintf(w, "  %-10s log10 %+.6f = probability %.6g\n", "result", ex.LogProb, math.Pow(10, ex.LogProb))
	return nil
}
