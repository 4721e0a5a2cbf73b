package main

import (
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/counts"
	"ingot/compile/input"
)

func newCountCmd() *cobra.Command {
	var (
		order    int
		out      string
		minCount uint64
		wordList string
		asText   bool
		asJSON   bool
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
			c, err := counts.NewCounter(order)
			if err != nil {
				return fmt.Errorf("count: --order: %w", err)
			}
			if wordList != "" && minCount > 1 {
				return fmt.Errorf("count: --min-word-count and --vocabulary exclude each other (the word list fixes the vocabulary)")
			}
			list, err := loadWordList("count", wordList)
			if err != nil {
				return err
			}
			if list != nil {
				c.UseVocabulary(list)
			}
			if len(args) == 0 {
				args = []string{input.Stdin}
			}
			pr := newProgress(cmd.ErrOrStderr())
			defer pr.done()
			for _, name := range args {
				pr.step("counting %s", name)
				if err := addText(c, name); err != nil {
					return err
				}
			}
			pr.step("sorting the n-grams")
			res := c.Counts(minCount)
			if total(res) == 0 {
				return fmt.Errorf("count: no sentences in %s", strings.Join(args, ", "))
			}
			err = writeOutput(cmd.Context(), out, cmd.OutOrStdout(), func(w io.Writer) error {
				if asText {
					_, err := res.WriteTo(w)
					return err
				}
				return res.WriteBinary(w)
			})
			if err != nil || !asJSON {
				return err
			}
			return reportCount(cmd.OutOrStdout(), out, res)
		},
	}
	f := cmd.Flags()
	f.IntVar(&order, "order", 0, "highest n-gram order to count (required)")
	f.StringVarP(&out, "output", "o", "", "write counts here instead of standard output")
	f.BoolVar(&asText, "text", false, "write the text form (count, tab, n-gram) instead of the binary form")
	f.Uint64Var(&minCount, "min-word-count", 1, "replace words seen fewer times than this by <unk>")
	f.StringVar(&wordList, "vocabulary", "", "fixed word list, one word per line: count every other word as <unk>")
	f.BoolVar(&asJSON, "json", false, "report what was written as JSON (needs -o)")
	cmd.MarkFlagRequired("order")
	return cmd
}

// reportCount prints count's JSON report: the file written, its size, and
// the n-grams per order.
func reportCount(w io.Writer, out string, res *counts.Counts) error {
	fi, err := os.Stat(out)
	if err != nil {
		return err
	}
	per := make([]int, res.Order())
	for k := range per {
		per[k] = res.Len(k + 1)
	}
	return writeJSON(w, struct {
		Counts         string `json:"counts"`
		FileBytes      int64  `json:"file_bytes"`
		Order          int    `json:"order"`
		NGramsPerOrder []int  `json:"ngrams_per_order"`
	}{out, fi.Size(), res.Order(), per})
}

func total(c *counts.Counts) uint64 {
	var n uint64
	for _, x := range c.Levels[0].Counts {
		n += x
	}
	return n
}

func addText(c *counts.Counter, name string) error {
	r, err := input.Open(name)
	if err != nil {
		return fmt.Errorf("count: %w", err)
	}
	defer r.Close()
	shown := name
	if name == input.Stdin {
		shown = "stdin"
	}
	if err := c.AddText(shown, r); err != nil {
		return err
	}
	return nil
}
