package main

import (
	"bufio"
	"fmt"
	"io"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/input"
	"ingot/format"
	"ingot/format/score"
	"ingot/inspect"
)

func newScoreCmd() *cobra.Command {
	var asJSON, summaryOnly bool
	cmd := &cobra.Command{
		Use:   "score [--json] [--summary-only] MODEL [TEXT...]",
		Short: "Score text: log10 probability and perplexity per sentence",
		Long: `Score text with a model, one sentence per line. Each sentence is scored as
the predictions of its words and </s>, starting from <s>; a word outside the
vocabulary is scored as <unk>. Prints, per sentence, the sum of log10
probabilities and the perplexity with and without the predictions of <unk>,
then a summary. Reads standard input when no TEXT is given.

With --json: one JSON object per sentence ("tokens", "log10",
"matched_order", ...), then a summary object ("perplexity", ...).
"matched_order" gives, per token, the order of the stored n-gram whose
probability was used: 1 for a unigram, 0 for a word outside the vocabulary.
--summary-only prints the summary alone.`,
		Example: `  ingot score field.ingot heldout.txt
  ingot score --summary-only field.ingot heldout.txt
  echo "turn the beacon on" | ingot score --json field.ingot`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			m, err := openModel(args[0])
			if err != nil {
				return err
			}
			defer m.Close()
			texts := args[1:]
			if len(texts) == 0 {
				texts = []string{input.Stdin}
			}
			w := bufio.NewWriter(cmd.OutOrStdout())
			defer w.Flush()
			// Every input is read and checked before anything is printed.
			var held []*score.HeldOut
			for _, name := range texts {
				h, err := readHeldOut(name)
				if err != nil {
					return err
				}
				held = append(held, h)
			}
			var all score.Summary
			for _, h := range held {
				sum, err := scoreFile(w, m, h, asJSON, summaryOnly)
				if err != nil {
					return err
				}
				all.Merge(sum)
			}
			return printSummary(w, args[0], &all, asJSON)
		},
	}
	cmd.Flags().BoolVar(&asJSON, "json", false, "print JSON Lines: one object per sentence, then a summary")
	cmd.Flags().BoolVar(&summaryOnly, "summary-only", false, "print only the summary, not every sentence")
	return cmd
}

func openModel(path string) (*format.Model, error) {
	// The reader's errors name the file already.
	return format.Open(path)
}

// readHeldOut reads and checks one text to score ("-": standard input).
func readHeldOut(name string) (*score.HeldOut, error) {
	r, err := input.Open(name)
	if err != nil {
		return nil, fmt.Errorf("score: %w", err)
	}
	defer r.Close()
	shown := name
	if name == input.Stdin {
		shown = "stdin"
	}
	return score.ReadHeldOut(shown, r)
}

func scoreFile(w io.Writer, m *format.Model, h *score.HeldOut, asJSON, summaryOnly bool) (score.Summary, error) {
	shown := h.Name
	enc := newEncoder(w)
	return h.Score(m, func(s *score.Sentence) error {
		if summaryOnly {
			return nil
		}
		if asJSON {
			return enc.Encode(inspect.NewScoredSentence(shown, s))
		}
		_, err := fmt.Fprintf(w, "%s:%d\tlog10 %.4f\tperplexity %.3f\twithout <unk> %.3f\t%s\n",
			shown, s.Line, s.Sum, s.Perplexity(), s.PerplexityWithoutUnknown(), strings.Join(s.Tokens, " "))
		return err
	})
}

func printSummary(w io.Writer, model string, s *score.Summary, asJSON bool) error {
	if asJSON {
		return writeJSON(w, inspect.NewScoreSummary(model, s))
	}
	rows := [][2]string{
		{"model", model},
		{"sentences", fmt.Sprint(s.Sentences)},
		{"predictions", fmt.Sprintf("%d, of which %d of <unk>", s.Predictions, s.Unk)},
		{"sum of log10", fmt.Sprintf("%.4f", s.Sum)},
		{"perplexity", fmt.Sprintf("%.3f", s.Perplexity())},
		{"  without <unk>", fmt.Sprintf("%.3f", s.PerplexityWithoutUnknown())},
	}
	for _, r := range rows {
		if _, err := fmt.Fprintf(w, "%-16s%s\n", r[0], r[1]); err != nil {
			return err
		}
	}
	return nil
}
