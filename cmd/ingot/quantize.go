package main

import (
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"ingot/compile/pipeline"
	"ingot/format"
	"ingot/quantize"
)

// quantizeFlags are the quantization options shared by quantize and prune.
type quantizeFlags struct {
	bits, backoffBits, unigramBits int
	trainer                        string
}

func (q *quantizeFlags) register(cmd *cobra.Command, required bool) {
	f := cmd.Flags()
	help := "bits per probability index, 2 to 16 (orders 2 and up)"
	if !required {
		help += "; quantize the result too"
	}
	f.IntVar(&q.bits, "bits", 0, help)
	f.IntVar(&q.backoffBits, "backoff-bits", 0, "bits per back-off weight index, 2 to 16 (default: --bits, at least 8)")
	f.IntVar(&q.unigramBits, "unigram-bits", 0, "bits per unigram probability index, 2 to 16 (default: --bits, at least 8)")
	f.StringVar(&q.trainer, "trainer", string(quantize.LeastSquares), "codebook trainer: least-squares (least squared error) or equal-mass (equal weight per level)")
}

func (q *quantizeFlags) options(cmd string) (quantize.Options, error) {
	tr, err := quantize.ParseTrainer(q.trainer)
	if err != nil {
		return quantize.Options{}, fmt.Errorf("%s: --trainer: %w", cmd, err)
	}
	for name, b := range map[string]int{"--bits": q.bits, "--backoff-bits": q.backoffBits, "--unigram-bits": q.unigramBits} {
		if name != "--bits" && b == 0 {
			continue
		}
		if b < 2 || b > 16 {
			return quantize.Options{}, fmt.Errorf("%s: %s %d outside 2..16", cmd, name, b)
		}
	}
	return quantize.Options{Bits: q.bits, BackoffBits: q.backoffBits, UnigramBits: q.unigramBits, Trainer: tr}, nil
}

func newQuantizeCmd() *cobra.Command {
	var (
		qf      quantizeFlags
		out     string
		heldout string
		asJSON  bool
	)
	cmd := &cobra.Command{
		Use:   "quantize -o OUT --bits B [--backoff-bits B] [--unigram-bits B] [--trainer least-squares|equal-mass] IN",
		Short: "Store log10 probabilities and back-off weights as small codebook indexes",
		Long: `Quantize a model: per order, a codebook of 2^B log10 probabilities (orders 2
and up; unigrams get one of 2^--unigram-bits levels) and one of back-off
weights, each value stored as a B-bit index. The codebooks are trained by exact one-dimensional
k-means (least-squares: Wang & Song 2011, least squared error) or by cutting
the values into levels of equal weight (equal-mass).
Back-off weights are recomputed from the quantized probabilities before they
are quantized themselves, and their rounding is compensated where the
levels allow, so every context still sums to one within 1e-4 (the unigrams too: their
levels are moved one at a time, largest first, until they do) (an order's
back-off codebook is widened where that needs it); 'ingot verify' allows
1e-3 for any quantized model (see the README).`,
		Example: `  ingot quantize --bits 8 -o field-q8.ingot field.ingot
  ingot quantize --bits 4 --backoff-bits 6 --heldout dev.txt -o tiny.ingot field.ingot`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opt, err := qf.options("quantize")
			if err != nil {
				return err
			}
			if err := notToStdout("quantize", out); err != nil {
				return err
			}
			// -o may name the model itself (it is read whole first and
			// replaced atomically), never the held-out text.
			if err := checkOutput("quantize", out, heldout); err != nil {
				return err
			}
			if err := checkHeldout("quantize", heldout); err != nil {
				return err
			}
			t, err := readUnquantized("quantize", args[0])
			if err != nil {
				return err
			}
			pr := newProgress(cmd.ErrOrStderr())
			pr.step("training codebooks and quantizing")
			in, err := pipeline.DigestFile(args[0])
			if err != nil {
				pr.done()
				return fmt.Errorf("quantize: %w", err)
			}
			q, reports, err := pipeline.Quantize(t, opt, pipeline.Record(commandWords(cmd), "", in))
			pr.done()
			if err != nil {
				return err
			}
			before, err := pipeline.Measure(args[0], heldout)
			if err != nil {
				return err
			}
			if err := writeOutput(cmd.Context(), out, nil, func(w io.Writer) error { return format.Write(w, q) }); err != nil {
				return err
			}
			return reportQuantize(cmd.OutOrStdout(), reports, before, out, heldout, asJSON)
		},
	}
	qf.register(cmd, true)
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "quantized model file to write (required)")
	f.StringVar(&heldout, "heldout", "", "report perplexity of both models on this text")
	f.BoolVar(&asJSON, "json", false, "print the report as JSON")
	cmd.MarkFlagRequired("output")
	cmd.MarkFlagRequired("bits")
	return cmd
}

func reportQuantize(w io.Writer, reports []quantize.OrderReport, before pipeline.Measured, out, heldout string, asJSON bool) error {
	res, err := compareWritten(before, out, heldout)
	if err != nil {
		return err
	}
	if asJSON {
		return writeJSON(w, res.QuantizeReport(out, reports))
	}
	fmt.Fprintf(w, "wrote %s: %s (was %s)\n", out, humanSize(res.Result.FileBytes), humanSize(res.Baseline.FileBytes))
	fmt.Fprintf(w, "  %-5s  %-30s  %-30s  %s\n", "order", "probabilities", "back-off weights", "residual")
	for _, r := range reports {
		p := "32-bit floats"
		if r.ProbLevels > 0 {
			p = fmt.Sprintf("%d levels, max error %.2g", r.ProbLevels, r.ProbMaxError)
		}
		b := "-"
		if r.BackoffLevels > 0 {
			b = fmt.Sprintf("%d levels, max error %.2g", r.BackoffLevels, r.BackoffMaxError)
		}
		fmt.Fprintf(w, "  %-5d  %-30s  %-30s  %.2g\n", r.Order, p, b, r.Residual)
	}
	_, err = io.WriteString(w, perplexityLine(res))
	return err
}
