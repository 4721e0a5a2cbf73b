package main

import (
	"errors"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"ingot/compile/bounded"
	"ingot/compile/estimate"
	"ingot/compile/pipeline"
	"ingot/compile/vocab"
	"ingot/format"
	"ingot/format/files"
)

func newCompileCmd() *cobra.Command {
	var (
		method    string
		order     int
		discount  string
		threshold int
		out       string
		minCounts string
		asJSON    bool
		wordList  string
		bf        budgetFlags
		repeats   bool
		rf        runFlags
	)
	cmd := &cobra.Command{
		Use:   "compile --method M --order N -o MODEL COUNTS...",
		Short: "Estimate a smoothed back-off model from n-gram counts",
		Long: `Estimate a back-off language model of order N from count files and write it
as a binary model file.

Count files are binary (as count writes them) or text ("count<TAB>w1 ... wk"
lines in any order), told apart by their first bytes; several files
(shards) of either form are merged and duplicate n-grams summed; .gz and
.zst are decompressed. Every k-gram's prefix and suffix must have a count.

Methods:
  katz          Katz back-off with Good-Turing discounts (--katz-threshold K, default 5)
  absolute      absolute discounting (--discount D in (0,1), default 0.5, or auto)
  witten-bell   interpolated Witten-Bell
  kneser-ney    interpolated modified Kneser-Ney

The report lists n-grams per order, the discounts used and every corner-case
rule that applied.

With --vocabulary FILE (one word per line) the model predicts exactly the
listed words, </s> and <unk>: every other word of the counts becomes <unk>
(counts of n-grams that become equal are summed), and listed words without
counts get probability through the lower orders.

Memory: compile keeps within --memory (default: a quarter of physical
memory). When the counts would not fit in memory (about 200 bytes per
n-gram: binary files are sized by the entries their end records announce,
text files by their size; a compressed file or standard input is taken not
to fit), they are merged into one sorted file per order in a private
directory under --tmp and estimated in sorted passes: Kneser-Ney adjusted
counts, count of counts, discounts, lower-order probabilities and back-off
weights are found by sorting on disk (runs beyond half the budget) and
merging, one order at a time, and the model is written section by section
as it is produced. The model is the same, byte for byte, as the in-memory
one. --vocabulary, --min-count and --max-size need the counts in memory.
The directory is removed on success, on failure and on SIGINT or SIGTERM.
--log-level info logs the passes and spills.

--max-size writes the model pruned to fit SIZE (bytes, or 500KB, 8MiB), in
one step from the counts: n-grams are ranked by relative entropy (Stolcke
1998) on a model of the same counts (--rank-with; for kneser-ney a Katz
model by default, whose lower orders stand on their own), the least useful
are removed, and a kneser-ney model is estimated again on the survivors so
that its lower orders fit what was removed. --bits quantizes it too (the
budget applies to the quantized file). --heldout TEXT also builds every
lower order to the same budget and keeps the one with the lowest held-out
perplexity, listing what it compared.`,
		Example: `  ingot compile --method kneser-ney --order 3 -o field.ingot counts.bin
  ingot compile --method kneser-ney --order 3 --vocabulary lexicon.txt -o field.ingot counts.bin
  ingot compile --method absolute --discount auto --order 4 -o m.ingot shard-*.bin extra.txt.zst
  ingot compile --method kneser-ney --order 5 --max-size 2MB --bits 8 --heldout dev.txt -o device.ingot counts.bin`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opt := estimate.Options{Method: estimate.Method(method), Order: order, KatzThreshold: threshold}
			if err := optionsApply(cmd, opt.Method); err != nil {
				return err
			}
			if threshold < 1 || threshold > estimate.MaxKatzThreshold {
				return fmt.Errorf("compile: --katz-threshold %d outside 1..%d", threshold, estimate.MaxKatzThreshold)
			}
			if err := pipeline.ParseDiscount(discount, &opt); err != nil {
				return fmt.Errorf("compile: %w", err)
			}
			if err := opt.Validate(); err != nil {
				return fmt.Errorf("compile: %w", err)
			}
			if out == "" {
				return fmt.Errorf("compile: -o MODEL is required")
			}
			cutoffs, err := pipeline.ParseCutoffs(minCounts, order)
			if err != nil {
				return fmt.Errorf("compile: %w", err)
			}
			list, err := loadWordList("compile", wordList)
			if err != nil {
				return err
			}
			if err := bf.check(); err != nil {
				return err
			}
			if bf.set() && len(cutoffs) > 0 {
				return fmt.Errorf("compile: give --max-size or --min-count, not both")
			}
			memory, err := rf.budget("compile")
			if err != nil {
				return err
			}
			log, err := rf.logger("compile", cmd.ErrOrStderr())
			if err != nil {
				return err
			}
			pr := newProgress(cmd.ErrOrStderr())
			if rf.quiet {
				pr.w = nil
			}
			defer pr.done()
			if err := checkOutput("compile", out, append([]string{wordList}, args...)...); err != nil {
				return err
			}
			if i, j, ok := files.FirstRepeat(args); ok && !repeats {
				return fmt.Errorf("compile: %s and %s are the same file: its counts would be added twice (give --allow-repeats to weight it so on purpose)", args[i], args[j])
			}
			run := pipeline.Compile{
				Estimate: opt, Discount: discount, MinCount: minCounts, Vocabulary: list,
				MaxSize: bf.maxSize, ToolVersion: version,
				Progress: func(s string) { pr.step("%s", s) },
				Warn:     func(s string) { fmt.Fprintf(cmd.ErrOrStderr(), "ingot: compile: %s\n", s) },
			}
			if run.BuildTime, err = pipeline.BuildTime(); err != nil {
				return fmt.Errorf("compile: %w", err)
			}
			if bf.set() {
				if run.Budget, err = bf.options(); err != nil {
					return err
				}
			}
			if !bounded.InMemoryFits(args, memory) {
				if !run.InMemoryOnly() {
					run.Command = pipeline.Record(commandWords(cmd), bf.maxSize)
					m, err := run.RunBounded(cmd.Context(), args, bounded.Options{
						Memory: memory, TempDir: rf.tmp, Temp: pendingFrom(cmd.Context()), Log: log})
					if err != nil {
						return fmt.Errorf("compile: %w", err)
					}
					defer m.Close()
					log.Info("estimated", "runs", m.Result.Runs, "spilled_bytes", m.Result.Bytes)
					pr.step("writing %s", out)
					if err := writeOutput(cmd.Context(), out, cmd.OutOrStdout(), func(w io.Writer) error {
						return m.Write(w, m.Info)
					}); err != nil {
						return err
					}
					pr.done()
					return printReport(reportTo(cmd, out), m.Result.Report, out, asJSON)
				}
				log.Warn("the counts may not fit --memory: --vocabulary, --min-count and --max-size hold them in memory", "memory", memory)
			}
			pr.step("reading counts")
			c, inputs, err := pipeline.LoadCounts(order, args)
			if err != nil {
				return fmt.Errorf("compile: %w", err)
			}
			run.Command = pipeline.Record(commandWords(cmd), bf.maxSize, inputs...)
			res, err := run.Run(c)
			var be *pipeline.BudgetError
			if errors.As(err, &be) {
				return checkFailed{fmt.Errorf("compile: %w", err)}
			}
			if err != nil {
				return fmt.Errorf("compile: %w", err)
			}
			pr.step("writing %s", out)
			if err := writeOutput(cmd.Context(), out, cmd.OutOrStdout(), func(w io.Writer) error {
				return format.Write(w, res.Model)
			}); err != nil {
				return err
			}
			pr.done()
			if res.Fit != nil {
				return printBudgetReport(reportTo(cmd, out), res.Fit, run.Budget.MaxBytes, res.Estimate.Method, res.Estimate.Order, out, asJSON)
			}
			return printReport(reportTo(cmd, out), res.Report, out, asJSON)
		},
	}
	f := cmd.Flags()
	f.StringVar(&method, "method", "", "estimator: katz, absolute, witten-bell or kneser-ney (required)")
	f.IntVar(&order, "order", 0, "model order N (required)")
	f.StringVar(&discount, "discount", "0.5", "absolute discount D in (0,1), or auto for n1/(n1+2 n2) per order")
	f.IntVar(&threshold, "katz-threshold", estimate.DefaultKatzThreshold, "Katz: counts above K are not discounted")
	f.StringVarP(&out, "output", "o", "", "model file to write (required)")
	f.StringVar(&minCounts, "min-count", "", "count cutoffs K=M[,K=M...]: drop n-grams of order K seen fewer than M times")
	f.BoolVar(&asJSON, "json", false, "print the build report as JSON")
	f.StringVar(&wordList, "vocabulary", "", "fixed word list, one word per line: predict exactly these words, </s> and <unk>")
	f.StringVar(&bf.maxSize, "max-size", "", "prune the model to fit SIZE bytes (e.g. 500KB, 8MiB), choosing what to remove from the counts")
	f.StringVar(&bf.heldout, "heldout", "", "with --max-size: compare every lower order at the same budget on this text and keep the best")
	f.StringVar(&bf.rankWith, "rank-with", "", "with --max-size: method whose model ranks n-grams for removal (default: katz for kneser-ney, else the method itself)")
	bf.qf.register(cmd, false)
	rf.add(f)
	f.BoolVar(&repeats, "allow-repeats", false, "accept a count file named more than once, its counts added once per naming (deliberate weighting)")
	cmd.MarkFlagRequired("method")
	cmd.MarkFlagRequired("order")
	cmd.MarkFlagRequired("output")
	return cmd
}

// optionsApply refuses an option of one method given with another: it would
// be ignored without a word.
func optionsApply(cmd *cobra.Command, method estimate.Method) error {
	for flag, only := range map[string]estimate.Method{"discount": estimate.Absolute, "katz-threshold": estimate.Katz} {
		if cmd.Flags().Changed(flag) && method != only {
			return fmt.Errorf("compile: --%s applies to --method %s only, not %s", flag, only, method)
		}
	}
	return nil
}

// loadWordList reads the --vocabulary file, or returns nil when none is
// given.
func loadWordList(command, path string) (*vocab.List, error) {
	if path == "" {
		return nil, nil
	}
	l, err := vocab.Load(path)
	if err != nil {
		return nil, fmt.Errorf("%s: --vocabulary: %w", command, err)
	}
	return l, nil
}

func printReport(w io.Writer, rep *estimate.Report, out string, asJSON bool) error {
	if asJSON {
		return writeJSON(w, pipeline.NewCompileReport(out, rep))
	}
	fmt.Fprintf(w, "wrote %s (%s, order %d)\n", out, rep.Method, len(rep.Orders))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "order\tn-grams\tcontexts\tdiscounts\t")
	var fallbacks []string
	for _, o := range rep.Orders {
		var ds []string
		for _, p := range o.Discounts {
			ds = append(ds, fmt.Sprintf("%s=%.4f", p.Name, p.Value))
		}
		if len(ds) == 0 {
			ds = []string{"-"}
		}
		ng := fmt.Sprint(o.NGrams)
		if o.Cut {
			ng = fmt.Sprintf("%d (kept %d)", o.NGrams, o.Kept)
		}
		fmt.Fprintf(tw, "%d\t%s\t%d\t%s\t\n", o.Order, ng, o.Contexts, strings.Join(ds, " "))
		fallbacks = append(fallbacks, o.Fallbacks...)
	}
	tw.Flush()
	for _, f := range fallbacks {
		fmt.Fprintf(w, "rule applied: %s\n", f)
	}
	return nil
}
