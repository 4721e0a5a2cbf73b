package main

import (
	"errors"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"ingot/compile/pipeline"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

func newPruneCmd() *cobra.Command {
	var (
		out       string
		threshold float64
		maxSize   string
		heldout   string
		asJSON    bool
		qf        quantizeFlags
	)
	cmd := &cobra.Command{
		Use:   "prune -o OUT (--drop-below NATS | --max-size SIZE) [--heldout TEXT] IN",
		Short: "Shrink a model by relative-entropy pruning",
		Long: `Remove the n-grams whose removal changes the model least, after Stolcke (1998),
"Entropy-based pruning of backoff language models". Every n-gram (h, w) of
order 2 and up gets, on the unpruned model, the weighted relative entropy
(in nats) its removal alone would cause; those below the threshold go, except
contexts of surviving longer n-grams; unigrams always stay. Back-off weights
are then recomputed so every context sums to one again.

--max-size finds, by bisection over the scores, the least pruning whose file
fits the budget (bytes, or with a unit: 500KB, 8MiB). With --bits the pruned
model is also quantized (as 'ingot quantize' does), and the budget applies
to the quantized file. --heldout reports the perplexity of both models on
held-out text.`,
		Example: `  ingot prune --drop-below 1e-7 -o small.ingot field.ingot
  ingot prune --max-size 8MiB --heldout dev.txt -o device.ingot field.ingot`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			hasT, hasS := cmd.Flags().Changed("drop-below"), maxSize != ""
			if hasT == hasS {
				return fmt.Errorf("prune: give exactly one of --drop-below and --max-size")
			}
			if hasT && !(threshold >= 0) {
				return fmt.Errorf("prune: --drop-below %v must be a number >= 0", threshold)
			}
			var maxBytes int64
			var err error
			if hasS {
				if maxBytes, err = parseSize(maxSize); err != nil {
					return fmt.Errorf("prune: --max-size: %w", err)
				}
			}
			var qopt quantize.Options
			for _, flag := range []string{"backoff-bits", "trainer"} {
				if qf.bits == 0 && cmd.Flags().Changed(flag) {
					return fmt.Errorf("prune: --%s applies only with --bits", flag)
				}
			}
			if qf.bits != 0 {
				if qopt, err = qf.options("prune"); err != nil {
					return err
				}
			}
			if err := notToStdout("prune", out); err != nil {
				return err
			}
			// -o may name the model itself (it is read whole first and
			// replaced atomically), never the held-out text.
			if err := checkOutput("prune", out, heldout); err != nil {
				return err
			}
			if err := checkHeldout("prune", heldout); err != nil {
				return err
			}
			t, err := readUnquantized("prune", args[0])
			if err != nil {
				return err
			}
			if advice := prune.Advice(t.Info.Method); advice != "" {
				fmt.Fprintf(cmd.ErrOrStderr(), "ingot: prune: warning: %s\n", advice)
			}
			in, err := pipeline.DigestFile(args[0])
			if err != nil {
				return fmt.Errorf("prune: %w", err)
			}
			pr := newProgress(cmd.ErrOrStderr())
			defer pr.done()
			res, err := pipeline.Prune{
				DropBelow: threshold, MaxBytes: maxBytes, MaxSize: maxSize, Quantize: qopt,
				Command:  pipeline.Record(commandWords(cmd), maxSize, in),
				Progress: func(s string) { pr.step("%s", s) },
			}.Run(t)
			var be *pipeline.BudgetError
			if errors.As(err, &be) {
				return checkFailed{fmt.Errorf("prune: %w", be.Err)}
			}
			if err != nil {
				return err
			}
			p, threshold := res.Model, res.Threshold
			measured, err := pipeline.Measure(args[0], heldout)
			if err != nil {
				return err
			}
			if err := writeOutput(cmd.Context(), out, nil, func(w io.Writer) error { return format.Write(w, p) }); err != nil {
				return err
			}
			pr.done()
			return reportPrune(cmd.OutOrStdout(), t, p, threshold, measured, out, heldout, asJSON)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "pruned model file to write (required)")
	f.Float64Var(&threshold, "drop-below", 0, "remove n-grams whose weighted relative entropy is below NATS")
	f.StringVar(&maxSize, "max-size", "", "prune just enough for the file to fit SIZE (e.g. 500KB, 8MiB)")
	f.StringVar(&heldout, "heldout", "", "report perplexity of both models on this text")
	f.BoolVar(&asJSON, "json", false, "print the report as JSON")
	qf.register(cmd, false)
	cmd.MarkFlagRequired("output")
	return cmd
}

func reportPrune(w io.Writer, before, after *tables.Tables, threshold float64, measured pipeline.Measured, out, heldout string, asJSON bool) error {
	r, err := compareWritten(measured, out, heldout)
	if err != nil {
		return err
	}
	if asJSON {
		return writeJSON(w, r.PruneReport(out, threshold, before, after))
	}
	fmt.Fprintf(w, "wrote %s: %s (was %s), threshold %.6g nats\n", out, humanSize(r.Result.FileBytes), humanSize(r.Baseline.FileBytes), threshold)
	for k := 1; k <= after.Order(); k++ {
		fmt.Fprintf(w, "  order %d: kept %d of %d n-grams\n", k, after.Len(k), before.Len(k))
	}
	_, err = io.WriteString(w, perplexityLine(r))
	return err
}
