package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/input"
	"ingot/format"
	"ingot/format/score"
)

func newScoreCmd() *cobra.Command {
	var asJSON bool
	cmd := &cobra.Command{
		Use:   "score [--json] MODEL [TEXT...]",
		Short: "Score text: log10 probability and perplexity per sentence",
		Long: `Score text with a model, one sentence per line. Each sentence is scored as
the predictions of its words and </s>, starting from <s>; a word outside the
vocabulary is scored as <unk>. Prints, per sentence, the sum of log10
probabilities and the perplexity with and without the predictions of <unk>,
then a summary. Reads standard input when no TEXT is given.

With --json: one JSON object per sentence ("tokens", "log10", ...), then a
summary object ("perplexity", ...).`,
		Example: `  ingot score field.ingot heldout.txt
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
			var all score.Summary
			for _, name := range texts {
				sum, err := scoreFile(w, m, name, asJSON)
				if err != nil {
					return err
				}
				all.Sentences += sum.Sentences
				all.Predictions += sum.Predictions
				all.Unk += sum.Unk
				all.Sum += sum.Sum
				all.UnkSum += sum.UnkSum
			}
			return printSummary(w, &all, asJSON)
		},
	}
	cmd.Flags().BoolVar(&asJSON, "json", false, "print JSON Lines: one object per sentence, then a summary")
	return cmd
}

func openModel(path string) (*format.Model, error) {
	// The reader's errors name the file already.
	return format.Open(path)
}

// jsonNumber renders a float for JSON; infinities and NaN become null.
type jsonNumber float64

func (f jsonNumber) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return []byte("null"), nil
	}
	return json.Marshal(v)
}

func numbers(xs []float64) []jsonNumber {
	out := make([]jsonNumber, len(xs))
	for i, x := range xs {
		out[i] = jsonNumber(x)
	}
	return out
}

type sentenceJSON struct {
	File                    string       `json:"file"`
	Line                    int          `json:"line"`
	Tokens                  []string     `json:"tokens"`
	Log10                   []jsonNumber `json:"log10"`
	SumLog10                jsonNumber   `json:"sum_log10"`
	UnkPredictions          int          `json:"unk_predictions"`
	SentencePerplexity      jsonNumber   `json:"sentence_perplexity"`
	SentencePerplexityNoUnk jsonNumber   `json:"sentence_perplexity_without_unk"`
}

func scoreFile(w io.Writer, m *format.Model, name string, asJSON bool) (score.Summary, error) {
	r, err := input.Open(name)
	if err != nil {
		return score.Summary{}, fmt.Errorf("score: %w", err)
	}
	defer r.Close()
	shown := name
	if name == input.Stdin {
		shown = "stdin"
	}
	enc := newEncoder(w)
	return score.Text(m, shown, r, func(s *score.Sentence) error {
		if asJSON {
			return enc.Encode(sentenceJSON{
				File: shown, Line: s.Line, Tokens: s.Tokens, Log10: numbers(s.Log10),
				SumLog10: jsonNumber(s.Sum), UnkPredictions: s.Unk,
				SentencePerplexity:      jsonNumber(s.Perplexity()),
				SentencePerplexityNoUnk: jsonNumber(s.PerplexityWithoutUnknown()),
			})
		}
		_, err := fmt.Fprintf(w, "%s:%d\tlog10 %.4f\tperplexity %.3f\twithout <unk> %.3f\t%s\n",
			shown, s.Line, s.Sum, s.Perplexity(), s.PerplexityWithoutUnknown(), strings.Join(s.Tokens, " "))
		return err
	})
}

func printSummary(w io.Writer, s *score.Summary, asJSON bool) error {
	if asJSON {
		return newEncoder(w).Encode(struct {
			Summary         bool       `json:"summary"`
			Sentences       int        `json:"sentences"`
			Predictions     int        `json:"predictions"`
			UnkPredictions  int        `json:"unk_predictions"`
			SumLog10        jsonNumber `json:"sum_log10"`
			Perplexity      jsonNumber `json:"perplexity"`
			PerplexityNoUnk jsonNumber `json:"perplexity_without_unk"`
		}{true, s.Sentences, s.Predictions, s.Unk, jsonNumber(s.Sum),
			jsonNumber(s.Perplexity()), jsonNumber(s.PerplexityWithoutUnknown())})
	}
	_, err := fmt.Fprintf(w, "sentences %d, predictions %d (%d of <unk>), sum log10 %.4f, perplexity %.3f, without <unk> %.3f\n",
		s.Sentences, s.Predictions, s.Unk, s.Sum, s.Perplexity(), s.PerplexityWithoutUnknown())
	return err
}
