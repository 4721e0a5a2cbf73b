package main

import (
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/counts"
	"ingot/compile/input"
	"ingot/compile/pipeline"
	"ingot/compile/tables"
)

func newCountCmd() *cobra.Command {
	var (
		order    int
		out      string
		minCount uint64
		wordList string
		asText   bool
		asJSON   bool
		run      runFlags
	)
	cmd := &cobra.Command{
		Use:   "count --order N [-o OUT] [TEXT...]",
		Short: "Count the n-grams of training text",
		Long: `Count the n-grams of orders 1..N in training text: UTF-8, one sentence per
line, tokens separated by white space. Each sentence is padded as
<s> ... </s>; n-grams never cross sentences. Reads standard input when no
TEXT is given; .gz and .zst files are decompressed.

The output is a binary count file (spec/COUNTS.md): sorted, compressed in
blocks, checked by CRC-32C; 'ingot inspect' shows it. With --text it is the
text form instead, one "count<TAB>w1 w2 ... wk" line per n-gram, orders in
increasing order. compile reads either, told apart by their first bytes.
Invalid UTF-8 or a marker (<s>, </s>, <unk>) inside the text is an error
naming the file and line, and no output file is left behind.

Counting runs on every core (GOMAXPROCS workers). Its n-gram tables stay
within --memory (default: a quarter of physical memory); beyond it, sorted
runs spill to a private directory under --tmp and are merged at the end.
The directory is removed on success, on failure and on SIGINT or SIGTERM.
The output is the same, byte for byte, whatever the cores and the budget.
A progress bar is drawn when stderr is a terminal (not with --quiet);
--log-level info logs the spills and the merge.

With --vocabulary FILE (one word per line) every word outside the list
counts as <unk>, a literal <unk> in the text included; give compile the same
--vocabulary so that listed words never seen stay predictable.`,
		Example: `  ingot count --order 3 -o counts.bin commands.txt
  ingot count --order 3 --vocabulary lexicon.txt -o counts.bin commands.txt
  zcat big.txt.gz | ingot count --order 5 --min-word-count 2 > counts.bin
  ingot count --order 3 --text -o counts.txt commands.txt`,
		RunE: func(cmd *cobra.Command, args []string) error {
			if asJSON && (out == "" || out == "-") {
				return fmt.Errorf("--json needs -o FILE: standard output carries the counts")
			}
			if order < 1 || order > tables.MaxOrder {
				return fmt.Errorf("count: --order: order %d outside 1..%d", order, tables.MaxOrder)
			}
			if wordList != "" && minCount > 1 {
				return fmt.Errorf("count: --min-word-count and --vocabulary exclude each other (the word list fixes the vocabulary)")
			}
			list, err := loadWordList("count", wordList)
			if err != nil {
				return err
			}
			memory, err := run.budget("count")
			if err != nil {
				return err
			}
			log, err := run.logger("count", cmd.ErrOrStderr())
			if err != nil {
				return err
			}
			if len(args) == 0 {
				args = []string{input.Stdin}
			}
			if err := checkOutput("count", out, append([]string{wordList}, args...)...); err != nil {
				return err
			}
			var inputs []counts.Input
			for _, name := range args {
				r, err := input.Open(name)
				if err != nil {
					return fmt.Errorf("count: %w", err)
				}
				defer r.Close()
				shown := name
				if name == input.Stdin {
					shown = "stdin"
				}
				inputs = append(inputs, counts.Input{Name: shown, R: r})
			}
			pb := run.newBar(cmd.ErrOrStderr(), inputSize(args), "counting")
			defer pb.finish()
			var rep *counts.Report
			err = writeOutput(cmd.Context(), out, cmd.OutOrStdout(), func(w io.Writer) error {
				var err error
				rep, err = counts.Count(cmd.Context(), counts.Options{
					Order: order, MinWordCount: minCount, Vocabulary: list,
					Memory: memory, TempDir: run.tmp, Text: asText,
					Progress: pb.progress, Log: log, Temp: pendingFrom(cmd.Context()),
				}, inputs, w)
				if err != nil {
					return err
				}
				if rep.Sentences == 0 {
					return fmt.Errorf("count: no sentences in %s", strings.Join(args, ", "))
				}
				log.Info("counted", "sentences", rep.Sentences, "tokens", rep.Tokens, "entries", rep.Entries, "runs", rep.Runs, "spilled_bytes", rep.Spilled)
				return nil
			})
			if err != nil || !asJSON {
				return err
			}
			return reportCount(cmd.OutOrStdout(), out, rep)
		},
	}
	f := cmd.Flags()
	f.IntVar(&order, "order", 0, "highest n-gram order to count (required)")
	f.StringVarP(&out, "output", "o", "", "write counts here instead of standard output")
	f.BoolVar(&asText, "text", false, "write the text form (count, tab, n-gram) instead of the binary form")
	f.Uint64Var(&minCount, "min-word-count", 1, "replace words seen fewer times than this by <unk>")
	f.StringVar(&wordList, "vocabulary", "", "fixed word list, one word per line: count every other word as <unk>")
	f.BoolVar(&asJSON, "json", false, "report what was written as JSON (needs -o)")
	run.add(f)
	cmd.MarkFlagRequired("order")
	return cmd
}

// reportCount prints count's JSON report (pipeline.CountReport).
func reportCount(w io.Writer, out string, rep *counts.Report) error {
	fi, err := os.Stat(out)
	if err != nil {
		return err
	}
	return writeJSON(w, pipeline.NewCountReport(out, fi.Size(), rep))
}
