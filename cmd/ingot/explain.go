package main

import (
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/tables"
	"ingot/format"
)

func newExplainCmd() *cobra.Command {
	var asJSON bool
	cmd := &cobra.Command{
		Use:   `explain [--json] MODEL "w1 ... wn"`,
		Short: "Show how P(wn | w1 ... wn-1) was computed",
		Long: `Show how the model computes P(wn | w1 ... wn-1): the longest stored n-gram
that matched and its stored log10 probability, each back-off weight applied
on the way down with the context it belongs to, and the final log10 and
probability. Start the words with <s> to ask about the start of a sentence.
A word outside the vocabulary is looked up as <unk>.`,
		Example: `  ingot explain field.ingot "<s> turn the beacon"
  ingot explain --json field.ingot "the beacon on"`,
		Args: cobra.ExactArgs(2),
		RunE: func(cmd *cobra.Command, args []string) error {
			words := strings.Fields(args[1])
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
			return printExplanation(cmd.OutOrStdout(), m, ex, unknown, asJSON)
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

func join(m *format.Model, ids []uint32) string {
	s := make([]string, len(ids))
	for i, id := range ids {
		s[i] = m.Word(id)
	}
	return strings.Join(s, " ")
}

type backoffJSON struct {
	Context     string     `json:"context"`
	Log10Weight jsonNumber `json:"log10_weight"`
}

func printExplanation(w io.Writer, m *format.Model, ex format.Explanation, unknown []string, asJSON bool) error {
	word := m.Word(ex.Word)
	matched := ""
	if ex.MatchedOrder > 0 {
		g := append(append([]uint32{}, ex.Context[len(ex.Context)-(ex.MatchedOrder-1):]...), ex.Word)
		matched = join(m, g)
	}
	if asJSON {
		v := struct {
			Context      string        `json:"context"`
			Word         string        `json:"word"`
			Unknown      []string      `json:"unknown_words,omitempty"`
			MatchedOrder int           `json:"matched_order"`
			MatchedNGram string        `json:"matched_ngram"`
			StoredLog10  jsonNumber    `json:"stored_log10"`
			Backoffs     []backoffJSON `json:"backoffs"`
			Log10        jsonNumber    `json:"log10"`
			Probability  jsonNumber    `json:"probability"`
		}{join(m, ex.Context), word, unknown, ex.MatchedOrder, matched, jsonNumber(ex.StoredLogProb),
			[]backoffJSON{}, jsonNumber(ex.LogProb), jsonNumber(math.Pow(10, ex.LogProb))}
		for _, b := range ex.Backoffs {
			v.Backoffs = append(v.Backoffs, backoffJSON{join(m, b.Context), jsonNumber(b.LogBackoff)})
		}
		enc := newEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(v)
	}
	ctx := join(m, ex.Context)
	fmt.Fprintf(w, "P(%s | %s)\n", word, ctx)
	for _, u := range unknown {
		fmt.Fprintf(w, "  %q is not in the vocabulary: looked up as %s\n", u, tables.Unknown)
	}
	for _, b := range ex.Backoffs {
		fmt.Fprintf(w, "  %-10s %q is stored but not followed by %q: back-off weight log10 %+.6f\n",
			"back off", join(m, b.Context), word, b.LogBackoff)
	}
	if ex.MatchedOrder == 0 {
		fmt.Fprintf(w, "  %q is not in the vocabulary\n", word)
	} else {
		fmt.Fprintf(w, "  %-10s order %d %q stored log10 %+.6f\n", "matched", ex.MatchedOrder, matched, ex.StoredLogProb)
	}
	fmt.Fprintf(w, "  %-10s log10 %+.6f = probability %.6g\n", "result", ex.LogProb, math.Pow(10, ex.LogProb))
	return nil
}
