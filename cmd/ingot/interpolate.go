package main

import (
	"fmt"
	"io"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"ingot/compile/pipeline"
	"ingot/compile/tables"
	"ingot/format"
)

func newInterpolateCmd() *cobra.Command {
	var (
		out     string
		weights string
		fit     string
		heldout string
		asJSON  bool
	)
	cmd := &cobra.Command{
		Use:   "interpolate -o OUT [--weights W1,W2,...] [--fit HELDOUT] [--heldout TEXT] [--json] MODEL1 MODEL2 ...",
		Short: "Merge several models into one back-off model by linear interpolation",
		Long: `Write one back-off model that interpolates several: each stored probability
is the exact mixture sum_i w_i P_i(w|h) of the inputs' back-off answers, the
stored n-grams are the union of the inputs', and every back-off weight is
recomputed so that every context sums to one. The vocabulary is the union of
the inputs'; a model gives a word it does not know its <unk> probability
shared equally with its <unk>. Inputs may be pruned or quantized; the output
stores 32-bit floats (quantize it afterwards).

The weights are given with --weights (one per model, in order, each > 0,
summing to 1), fitted with --fit HELDOUT by expectation-maximisation on
held-out text (maximising the likelihood of the exact mixture), or equal.
The report gives the perplexity of each input, of the exact mixture and of
the written model on --heldout TEXT (default: the --fit text).`,
		Example: `  ingot interpolate --fit device-logs-dev.txt -o adapted.ingot general.ingot device.ingot
  ingot interpolate --weights 0.7,0.3 --heldout dev.txt --json -o adapted.ingot general.ingot device.ingot`,
		Args: cobra.MinimumNArgs(2),
		RunE: func(cmd *cobra.Command, args []string) error {
			if weights != "" && fit != "" {
				return fmt.Errorf("interpolate: give --weights or --fit, not both")
			}
			run := pipeline.Interpolate{Names: args, ToolVersion: version}
			if weights != "" {
				var err error
				if run.Weights, err = parseFloats(weights); err != nil {
					return fmt.Errorf("interpolate: --weights: %w", err)
				}
			}
			if err := notToStdout("interpolate", out); err != nil {
				return err
			}
			if heldout == "" {
				heldout = fit
			}
			if err := checkOutput("interpolate", out, append([]string{fit, heldout}, args...)...); err != nil {
				return err
			}
			// Read every input before writing anything.
			var err error
			if fit != "" {
				if run.Fit, err = pipeline.ReadSentences(fit); err != nil {
					return fmt.Errorf("interpolate: --fit: %w", err)
				}
			}
			if heldout == fit {
				run.Heldout = run.Fit
			} else if run.Heldout, err = pipeline.ReadSentences(heldout); err != nil {
				return fmt.Errorf("interpolate: --heldout: %w", err)
			}
			run.HeldoutName = heldout
			pr := newProgress(cmd.ErrOrStderr())
			defer pr.done()
			run.Progress = func(s string) { pr.step("%s", s) }
			var models []*tables.Tables
			var inputs []tables.Input
			for _, path := range args {
				pr.step("reading %s", path)
				t, err := readTables(path)
				if err != nil {
					return fmt.Errorf("interpolate: %w", err)
				}
				models = append(models, t)
				in, err := pipeline.DigestFile(path)
				if err != nil {
					return fmt.Errorf("interpolate: %w", err)
				}
				inputs = append(inputs, in)
			}
			run.Command = pipeline.Record(commandWords(cmd), "", inputs...)
			if run.BuildTime, err = pipeline.BuildTime(); err != nil {
				return fmt.Errorf("interpolate: %w", err)
			}
			res, err := run.Run(models, out)
			if err != nil {
				return fmt.Errorf("interpolate: %w", err)
			}
			pr.step("writing %s", out)
			if err := writeOutput(cmd.Context(), out, cmd.OutOrStdout(), func(wr io.Writer) error {
				return format.Write(wr, res.Model)
			}); err != nil {
				return err
			}
			pr.step("scoring %s", out)
			if err := res.ScoreWritten(out); err != nil {
				return fmt.Errorf("interpolate: %w", err)
			}
			pr.done()
			return printInterpolate(cmd.OutOrStdout(), &res.Report, asJSON)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "model file to write (required)")
	f.StringVar(&weights, "weights", "", "one weight per model, in order, each > 0, summing to 1 (default: equal, or fitted with --fit)")
	f.StringVar(&fit, "fit", "", "held-out text to fit the weights on by expectation-maximisation")
	f.StringVar(&heldout, "heldout", "", "held-out text to report perplexities on (default: the --fit text)")
	f.BoolVar(&asJSON, "json", false, "print the report as JSON")
	cmd.MarkFlagRequired("output")
	return cmd
}

// readTables reads a whole model into memory, quantized or not.
func readTables(path string) (*tables.Tables, error) {
	m, err := openModel(path)
	if err != nil {
		return nil, err
	}
	defer m.Close()
	t, err := format.ToTables(m)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return t, nil
}

func printInterpolate(w io.Writer, r *pipeline.InterpolateReport, asJSON bool) error {
	if asJSON {
		return writeJSON(w, r)
	}
	how := "given"
	if r.Fitted {
		how = fmt.Sprintf("fitted by EM in %d steps", r.Iterations)
	}
	fmt.Fprintf(w, "wrote %s (interpolated, order %d, %d words; weights %s)\n", r.Model, r.Order, r.VocabularySize, how)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	if r.Perplexity != nil {
		fmt.Fprintf(tw, "model\tweight\tperplexity on %s (%d predictions)\n", r.Heldout, r.Predictions)
	} else {
		fmt.Fprintf(tw, "model\tweight\t\n")
	}
	for i, in := range r.Inputs {
		ppl := ""
		if r.Perplexity != nil {
			ppl = fmt.Sprintf("%.3f", float64(r.InputPerplexities[i]))
		}
		fmt.Fprintf(tw, "%s\t%.6f\t%s\n", in, r.Weights[i], ppl)
	}
	if r.Perplexity != nil {
		fmt.Fprintf(tw, "exact mixture\t\t%.3f\n", float64(*r.MixturePerplexity))
		fmt.Fprintf(tw, "written model\t\t%.3f (%+.2f%%)\n", float64(*r.Perplexity),
			100*(float64(*r.Perplexity)/float64(*r.MixturePerplexity)-1))
	}
	tw.Flush()
	var ng []string
	for k, n := range r.NGramsPerOrder {
		ng = append(ng, fmt.Sprintf("order %d: %d", k+1, n))
	}
	fmt.Fprintf(w, "n-grams  %s\n", strings.Join(ng, ", "))
	return nil
}
