package main

import (
	"fmt"
	"io"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/tables"
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
			return printExplanation(cmd.OutOrStdout(), args[0], inspect.Explain(m, words), asJSON)
		},
	}
	cmd.Flags().BoolVar(&asJSON, "json", false, "print the explanation as JSON")
	return cmd
}

// explainQuantizedText renders q for the text explanation; what names the value.
func explainQuantizedText(q *inspect.Quantized, what string) string {
	bound := "not recorded"
	if q.MaxError != nil {
		bound = fmt.Sprintf("at most ±%.4g (recorded)", *q.MaxError)
	}
	return fmt.Sprintf("%s quantized: stored as codebook index %d (of %d levels); rounding error %s, the value before rounding is not kept",
		what, q.CodebookIndex, q.CodebookLevels, bound)
}

func printExplanation(w io.Writer, model string, ex *inspect.Explained, asJSON bool) error {
	if asJSON {
		return writeJSON(w, struct {
			Model string `json:"model"`
			*inspect.Explained
		}{model, ex})
	}
	word := ex.Word
	fmt.Fprintf(w, "P(%s | %s)\n", word, strings.Join(ex.Context, " "))
	for _, u := range ex.Unknown {
		fmt.Fprintf(w, "  %q is not in the vocabulary: looked up as %s\n", u, tables.Unknown)
	}
	for _, b := range ex.Backoffs {
		fmt.Fprintf(w, "  %-10s %q is stored but not followed by %q: back-off weight log10 %+.6f\n",
			"back off", strings.Join(b.Context, " "), word, float64(b.Log10Backoff))
		if q := b.Quantization; q != nil {
			fmt.Fprintf(w, "  %-10s %s\n", "", explainQuantizedText(q, "weight"))
		} else if ex.AnyQuantized {
			fmt.Fprintf(w, "  %-10s weight stored as a 32-bit float (not quantized)\n", "")
		}
	}
	if ex.MatchedOrder == 0 {
		fmt.Fprintf(w, "  %q is not in the vocabulary\n", word)
	} else {
		fmt.Fprintf(w, "  %-10s order %d %q stored log10 %+.6f\n", "matched", ex.MatchedOrder, ex.MatchedNGram, float64(ex.StoredLog10))
		if ex.Quantization != nil {
			fmt.Fprintf(w, "  %-10s %s\n", "", explainQuantizedText(ex.Quantization, "probability"))
		} else if ex.AnyQuantized {
			fmt.Fprintf(w, "  %-10s probability stored as a 32-bit float (not quantized)\n", "")
		}
	}
	fmt.Fprintf(w, "  %-10s log10 %+.6f = probability %.6g\n", "result", float64(ex.Log10), float64(ex.Probability))
	return nil
}
