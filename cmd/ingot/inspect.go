package main

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"ingot/compile/counts"
	"ingot/compile/tables"
	"ingot/inspect"
)

type inspectFlags struct {
	asJSON, stats, dump bool
	order               int
	prefix, next        string
	top                 int
}

func newInspectCmd() *cobra.Command {
	var f inspectFlags
	cmd := &cobra.Command{
		Use:   `inspect [--json] [--stats | --dump [--order K] [--prefix "w1 ..."] | --next "w1 ..." [--top N]] MODEL`,
		Short: "Show what a model file holds: header, sections, build information, entries",
		Long: `Show what a model file holds, read from the file itself.

Without a mode: the header (magic, format version, file size), the section
directory (kind, order, encoding, offset, length, CRC-32C) and the metadata:
order, vocabulary size, n-grams per order, method, discounts per order, the
rules the estimator applied, build options, history (cutoffs, pruning,
quantization), quantization, tool version, the suffix-closed flag, the
content digest and whether the file is signed. The signature is not checked
here; 'ingot verify --public-key KEY.pub MODEL' checks it.

--stats: n-grams, bytes and bits per n-gram per order and for the whole file,
bytes per section, the codebooks of quantized orders (levels, range, step:
the largest gap between neighbouring levels), the contexts of each order
(entries with stored extensions) and their log10 back-off weights.

--dump: every stored entry as JSON Lines, one object per line: "ngram",
"order", "log10_prob", "log10_backoff" (not at the highest order) and, for
quantized columns, "prob_index" and "backoff_index" (codebook indexes).
The unigram <s> has probability zero: its "log10_prob" is null. --order K
keeps one order; --prefix "w1 ..." keeps the n-grams that start with those
words, read from that part of the file only.

--next "w1 ...": the --top most probable next words after the context, each
with its log10, probability and whether the model used the stored n-gram of
the whole context and the word or backed off to a shorter one. Every word of
the vocabulary but <s> is scored through the model's own query path. Context
words outside the vocabulary are looked up as <unk>; <s> may start the
context. --next "" asks about the empty context.

--json prints one JSON object (the documented keys are listed in the
README); --dump always prints JSON Lines.

On a binary count file (told by its first bytes): its header and end
record (layout version, order, words, blocks, entries and sum of the
counts per order); --dump prints its entries in the text form of count
files, one "count<TAB>n-gram" line each (--order K keeps one order).`,
		Example: `  ingot inspect field.ingot
  ingot inspect --stats field.ingot
  ingot inspect --dump --prefix "turn the" field.ingot
  ingot inspect --next "<s> turn" --top 5 field.ingot`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runInspect(cmd, args[0], &f)
		},
	}
	fl := cmd.Flags()
	fl.BoolVar(&f.asJSON, "json", false, "print one JSON object")
	fl.BoolVar(&f.stats, "stats", false, "show sizes, codebooks, contexts and back-off weights per order")
	fl.BoolVar(&f.dump, "dump", false, "print the stored entries as JSON Lines")
	fl.IntVar(&f.order, "order", 0, "with --dump: only the entries of this order")
	fl.StringVar(&f.prefix, "prefix", "", "with --dump: only the n-grams that start with these words")
	fl.StringVar(&f.next, "next", "", "show the most probable words after this context")
	fl.IntVar(&f.top, "top", 10, "with --next: how many words to show")
	return cmd
}

func runInspect(cmd *cobra.Command, path string, f *inspectFlags) error {
	fl := cmd.Flags()
	modes := 0
	for _, on := range []bool{f.stats, f.dump, fl.Changed("next")} {
		if on {
			modes++
		}
	}
	switch {
	case modes > 1:
		return errors.New("inspect: --stats, --dump and --next do not combine; choose one")
	case (fl.Changed("order") || fl.Changed("prefix")) && !f.dump:
		return errors.New("inspect: --order and --prefix go with --dump")
	case fl.Changed("top") && !fl.Changed("next"):
		return errors.New("inspect: --top goes with --next")
	case f.top < 1:
		return fmt.Errorf("inspect: --top %d must be at least 1", f.top)
	}
	if counts.IsBinaryFile(path) {
		return runInspectCounts(cmd, path, f)
	}
	m, err := openModel(path)
	if err != nil {
		return err
	}
	defer m.Close()
	if fl.Changed("order") && (f.order < 1 || f.order > m.Order()) {
		return fmt.Errorf("inspect: --order %d outside the model's orders 1..%d", f.order, m.Order())
	}

	out := cmd.OutOrStdout()
	if f.dump {
		_, err := inspect.Dump(out, m, inspect.Selection{Order: f.order, Prefix: strings.Fields(f.prefix)})
		var ue *inspect.UnknownWordError
		if errors.As(err, &ue) {
			return fmt.Errorf("inspect: --prefix: %w", err)
		}
		if err != nil {
			return fmt.Errorf("inspect: %s: %w", path, err)
		}
		return nil
	}
	w := bufio.NewWriter(out)
	switch {
	case f.stats:
		err = printInspectStats(w, path, inspect.Statistics(m), f.asJSON)
	case fl.Changed("next"):
		var nw *inspect.NextWords
		if nw, err = inspect.Next(m, strings.Fields(f.next), f.top); err != nil {
			return fmt.Errorf("inspect: %w", err)
		}
		err = printInspectNext(w, path, len(strings.Fields(f.next)), nw, f.asJSON)
	default:
		err = printInspectSummary(w, path, inspect.Summarize(m), f.asJSON)
	}
	if err == nil {
		err = w.Flush()
	}
	return err
}

func printInspectSummary(w io.Writer, path string, s inspect.Summary, asJSON bool) error {
	if asJSON {
		return writeJSON(w, struct {
			Model string `json:"model"`
			inspect.Summary
		}{path, s})
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	row := func(name, format string, args ...any) {
		fmt.Fprintf(tw, "%s\t"+format+"\n", append([]any{name}, args...)...)
	}
	more := func(format string, args ...any) { fmt.Fprintf(tw, "\t"+format+"\n", args...) }
	magic := "bad"
	if s.MagicOK {
		magic = "ok"
	}
	row("model", "%s", path)
	row("header", "magic %s, format version %d, %d bytes, %d sections", magic, s.FormatVersion, s.FileBytes, len(s.Sections))
	row("order", "%d", s.Order)
	row("vocabulary", "%d words", s.VocabularySize)
	row("n-grams", "%s", inspectPerOrder(s.NGrams))
	row("method", "%s", inspectOrNone(s.Method))
	if len(s.Discounts) == 0 {
		row("discounts", "none recorded")
	}
	for k, d := range s.Discounts {
		name := ""
		if k == 0 {
			name = "discounts"
		}
		row(name, "order %d: %s", k+1, inspectParameters(d))
	}
	inspectList(row, more, "rules applied", s.RulesApplied)
	options := make([]string, 0, len(s.BuildOptions))
	for name, v := range s.BuildOptions {
		options = append(options, name+"="+v)
	}
	sort.Strings(options)
	row("build options", "%s", inspectOrNone(strings.Join(options, " ")))
	inspectList(row, more, "history", s.History)
	inspectCommands(row, more, s.Commands)
	if q := s.Quantization; q == nil {
		row("quantization", "none: every value is a 32-bit float")
	} else {
		row("quantization", "trainer %s, %d-bit probabilities, %d-bit back-off weights; largest rounding as recorded:", inspectOrNone(q.Trainer), q.Bits, q.BackoffBits)
		for _, o := range q.Orders {
			backoffs := inspectLevels(o.BackoffLevels, o.BackoffMaxError)
			if o.Order == s.Order {
				backoffs = "none stored"
			}
			more("order %d\tprobabilities %s\tback-off weights %s\tresidual %s",
				o.Order, inspectLevels(o.ProbLevels, o.ProbMaxError), backoffs, inspectRecorded(o.Residual))
		}
	}
	row("empty context", "log10 back-off %s (folded into the unigrams)", inspectRecorded(s.EmptyContextLog10Backoff))
	row("tool version", "%s", inspectOrNone(s.ToolVersion))
	row("suffix-closed", "%s", inspectYesNo(s.SuffixClosed))
	row("content digest", "%s", s.ContentDigest)
	if s.Signature.Signed {
		row("signature", "%s; not checked here: ingot verify --public-key KEY.pub checks it", s.Signature.Status())
	} else {
		row("signature", "%s", s.Signature.Status())
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w, "\nsections")
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "#\tkind\tsection\torder\tencoding\toffset\tlength\tCRC-32C")
	for _, sec := range s.Sections {
		fmt.Fprintf(tw, "%d\t%d\t%s\t%d\t%s\t%d\t%d\t%s\n", sec.Index, sec.Kind, sec.KindName, sec.Order, sec.Encoding, sec.Offset, sec.Length, sec.Checksum)
	}
	return tw.Flush()
}

// inspectCommands prints the provenance: each command that wrote the
// model, its budget and the files it read with their SHA-256 digests.
func inspectCommands(row func(string, string, ...any), more func(string, ...any), cmds []tables.Command) {
	if len(cmds) == 0 {
		row("commands", "none recorded")
		return
	}
	for i, c := range cmds {
		name := ""
		if i == 0 {
			name = "commands"
		}
		row(name, "%s", c.Line)
		if c.MaxSize != "" {
			more("  budget %s", c.MaxSize)
		}
		for _, in := range c.Inputs {
			more("  read %s: %d bytes, sha256 %s", in.Name, in.Bytes, in.SHA256)
		}
	}
}

// list prints a list under a heading, one item a line, or "none".
func inspectList(row func(string, string, ...any), more func(string, ...any), name string, items []string) {
	if len(items) == 0 {
		row(name, "none")
		return
	}
	row(name, "%s", items[0])
	for _, it := range items[1:] {
		more("%s", it)
	}
}

func inspectPerOrder(counts []int) string {
	parts := make([]string, len(counts))
	total := 0
	for k, n := range counts {
		parts[k] = fmt.Sprintf("order %d: %d", k+1, n)
		total += n
	}
	return fmt.Sprintf("%s (total %d)", strings.Join(parts, ", "), total)
}

func inspectParameters(d map[string]inspect.Number) string {
	if len(d) == 0 {
		return "none"
	}
	names := make([]string, 0, len(d))
	for name := range d {
		names = append(names, name)
	}
	sort.Strings(names)
	parts := make([]string, len(names))
	for i, name := range names {
		parts[i] = fmt.Sprintf("%s=%.6g", name, float64(d[name]))
	}
	return strings.Join(parts, " ")
}

func inspectLevels(n int, maxErr inspect.Number) string {
	if n == 0 {
		return "32-bit floats"
	}
	return fmt.Sprintf("%d levels ±%s", n, inspectRecorded(maxErr))
}

// recordedNumber renders a recorded value; NaN means none was recorded.
func inspectRecorded(x inspect.Number) string {
	if math.IsNaN(float64(x)) {
		return "(not recorded)"
	}
	return fmt.Sprintf("%.4g", float64(x))
}

func inspectOrNone(s string) string {
	if s == "" {
		return "none"
	}
	return s
}

func inspectYesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

func printInspectStats(w io.Writer, path string, st inspect.Stats, asJSON bool) error {
	if asJSON {
		return writeJSON(w, struct {
			Model string `json:"model"`
			inspect.Stats
		}{path, st})
	}
	fmt.Fprintf(w, "%s: %d bytes, %d n-grams, %.2f bits per n-gram (whole file)\n", path, st.FileBytes, st.TotalNGrams, float64(st.BitsPerNGram))
	fmt.Fprintf(w, "shared by all orders (header, directory, summary, build info, vocabulary, signature, padding): %d bytes\n\n", st.SharedBytes)

	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "order\tn-grams\tbytes\tbits/n-gram\tcontexts\tback-off log10 min\tmax\tmean")
	for _, o := range st.Orders {
		b := "-\t-\t-"
		if wt := o.BackoffWeights; wt != nil {
			b = fmt.Sprintf("%s\t%s\t%s", inspectFixed(wt.Min), inspectFixed(wt.Max), inspectFixed(wt.Mean))
		}
		fmt.Fprintf(tw, "%d\t%d\t%d\t%.2f\t%d\t%s\n", o.Order, o.NGrams, o.Bytes, float64(o.BitsPerNGram), o.Contexts, b)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	for _, o := range st.Orders {
		if wt := o.BackoffWeights; wt != nil && wt.NonContextsNotOne > 0 {
			fmt.Fprintf(w, "order %d: %d entries without extensions have a back-off weight other than 1\n", o.Order, wt.NonContextsNotOne)
		}
	}

	fmt.Fprintln(w, "\ncodebooks")
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "order\tcolumn\tlevels\tindex bits\tstored bits\tmin\tmax\tstep")
	quantized := false
	for _, o := range st.Orders {
		for _, c := range []struct {
			name string
			cb   *inspect.CodebookStats
		}{{"probabilities", o.ProbCodebook}, {"back-off weights", o.BackoffCodebook}} {
			if c.cb == nil {
				continue
			}
			quantized = true
			fmt.Fprintf(tw, "%d\t%s\t%d\t%d\t%.2f\t%s\t%s\t%s\n", o.Order, c.name, c.cb.Levels, c.cb.IndexBits, float64(c.cb.StoredBits), inspectFixed(c.cb.Min), inspectFixed(c.cb.Max), inspectFixed(c.cb.Step))
		}
	}
	if !quantized {
		fmt.Fprintln(w, "  none: every value is a 32-bit float")
	} else if err := tw.Flush(); err != nil {
		return err
	}

	fmt.Fprintln(w, "\nsections")
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "section\tbytes\tshare")
	for _, s := range st.Sections {
		fmt.Fprintf(tw, "%s\t%d\t%.1f%%\n", s.Name, s.Bytes, float64(s.Percent))
	}
	return tw.Flush()
}

// fixed renders a log10 value in fixed point, or "-" when it is not finite.
func inspectFixed(x inspect.Number) string {
	if math.IsInf(float64(x), 0) || math.IsNaN(float64(x)) {
		return "-"
	}
	return fmt.Sprintf("%.4f", float64(x))
}

func printInspectNext(w io.Writer, path string, given int, nw *inspect.NextWords, asJSON bool) error {
	if asJSON {
		return writeJSON(w, struct {
			Model string `json:"model"`
			*inspect.NextWords
		}{path, nw})
	}
	fmt.Fprintf(w, "next words after %q", strings.Join(nw.Context, " "))
	if given > len(nw.Context) {
		fmt.Fprintf(w, " (the model uses the last %d of the %d words given)", len(nw.Context), given)
	}
	fmt.Fprintln(w)
	for _, u := range nw.Unknown {
		fmt.Fprintf(w, "  %q is not in the vocabulary: looked up as %s\n", u, tables.Unknown)
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "rank\tword\tlog10\tprobability\tfrom")
	for i, p := range nw.Predictions {
		from := fmt.Sprintf("stored %d-gram", p.MatchedOrder)
		if !p.Stored {
			from = fmt.Sprintf("backed off to order %d", p.MatchedOrder)
		}
		fmt.Fprintf(tw, "%d\t%s\t%.4f\t%.6g\t%s\n", i+1, p.Word, float64(p.Log10), float64(p.Probability), from)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintf(w, "%d of %d words shown; all %d sum to %.6f\n", len(nw.Predictions), nw.Candidates, nw.Candidates, float64(nw.TotalProbability))
	return err
}
