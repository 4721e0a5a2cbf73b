package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"ingot/compile/pipeline"
	"ingot/quantize"
	"ingot/quantize/tradeoff"
)

func newTradeoffCmd() *cobra.Command {
	var (
		heldout    string
		thresholds string
		bits       string
		trainer    string
		out        string
		asJSON     bool
		budgetFlag string
	)
	cmd := &cobra.Command{
		Use:   "tradeoff --heldout TEXT [--drop-below NATS,...] [--bits B,...] [--budget SIZE] -o DIR MODEL...",
		Short: "Chart file size against held-out perplexity for pruning and quantization settings",
		Long: `Build, in memory, the model for every pair of a relative-entropy pruning
threshold and a quantization bit width, and measure its file size and its
perplexity on held-out text. Writes DIR/tradeoff.csv, DIR/tradeoff.json and
DIR/tradeoff.svg (size against perplexity, one line per bit width), so you can
see the curve and pick a point for your device. A threshold of 0 means no
pruning; a bit width of 0 means 32-bit floats. Several models share one
chart, each in its own colour; --budget draws the device's size limit.`,
		Example: `  ingot tradeoff --heldout dev.txt -o chart field.ingot
  ingot tradeoff --heldout dev.txt --budget 16KB -o chart kneser-ney.ingot katz.ingot
  ingot tradeoff --heldout dev.txt --drop-below 0,1e-8,1e-7,1e-6 --bits 0,8,4 -o chart field.ingot`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opt := tradeoff.Options{}
			var err error
			if opt.Thresholds, err = parseFloats(thresholds); err != nil {
				return fmt.Errorf("tradeoff: --drop-below: %w", err)
			}
			if opt.Bits, err = parseInts(bits); err != nil {
				return fmt.Errorf("tradeoff: --bits: %w", err)
			}
			if err := opt.Check(); err != nil {
				return fmt.Errorf("tradeoff: %w", err)
			}
			if opt.Trainer, err = quantize.ParseTrainer(trainer); err != nil {
				return fmt.Errorf("tradeoff: --trainer: %w", err)
			}
			var budget int64
			if budgetFlag != "" {
				if budget, err = parseSize(budgetFlag); err != nil {
					return fmt.Errorf("tradeoff: --budget: %w", err)
				}
			}
			if err := checkOutputDir("tradeoff", out, []string{"tradeoff.csv", "tradeoff.json", "tradeoff.svg"}, append([]string{heldout}, args...)...); err != nil {
				return err
			}
			held, err := pipeline.ReadSentences(heldout)
			if err != nil {
				return fmt.Errorf("tradeoff: --heldout: %w", err)
			}
			var models []tradeoff.Model
			for _, path := range args {
				t, err := readUnquantized("tradeoff", path)
				if err != nil {
					return err
				}
				models = append(models, tradeoff.Model{Name: path, Tables: t})
			}
			stderr := io.Discard // progress only on a terminal
			if newProgress(cmd.ErrOrStderr()).w != nil {
				stderr = cmd.ErrOrStderr()
			}
			opt.Progress = func(done, total int, p tradeoff.Point) {
				fmt.Fprintf(stderr, "\r%s [%d/%d] threshold %g, %d bits: %s, perplexity %.2f   ", filepath.Base(p.Model), done, total, float64(p.Threshold), p.Bits, humanSize(p.FileBytes), float64(p.Perplexity))
				if done == total {
					fmt.Fprintln(stderr)
				}
			}
			points, err := tradeoff.RunAll(models, held, opt)
			if err != nil {
				return fmt.Errorf("tradeoff: %w", err)
			}
			if err := os.MkdirAll(out, 0o755); err != nil {
				return fmt.Errorf("tradeoff: %w", err)
			}
			title := tradeoff.Title(args)
			for name, write := range map[string]func(io.Writer) error{
				"tradeoff.csv":  func(w io.Writer) error { return tradeoff.WriteCSV(w, points) },
				"tradeoff.json": func(w io.Writer) error { return tradeoff.WriteJSON(w, points) },
				"tradeoff.svg":  func(w io.Writer) error { return tradeoff.WriteSVG(w, title, points, budget) },
			} {
				if err := writeOutput(cmd.Context(), filepath.Join(out, name), nil, write); err != nil {
					return err
				}
			}
			w := cmd.OutOrStdout()
			if asJSON {
				return writeJSON(w, tradeoff.Report{Models: args, Output: out, Points: points})
			}
			fmt.Fprintf(w, "%-20s %-10s %5s %12s %11s\n", "model", "threshold", "bits", "file", "perplexity")
			for _, p := range points {
				fmt.Fprintf(w, "%-20s %-10g %5d %12s %11.3f\n", filepath.Base(p.Model), float64(p.Threshold), p.Bits, humanSize(p.FileBytes), float64(p.Perplexity))
			}
			fmt.Fprintf(w, "wrote %s/tradeoff.csv, tradeoff.json, tradeoff.svg\n", out)
			return nil
		},
	}
	f := cmd.Flags()
	f.StringVar(&heldout, "heldout", "", "held-out text to measure perplexity on (required)")
	f.StringVar(&thresholds, "drop-below", "0,1e-9,1e-8,1e-7,1e-6,1e-5", "pruning thresholds in nats, comma-separated: each model drops the n-grams below one (0: no pruning)")
	f.StringVar(&bits, "bits", "0,8,6,4", "quantization bit widths, comma-separated (0: 32-bit floats)")
	f.StringVar(&trainer, "trainer", string(quantize.LeastSquares), "codebook trainer: least-squares or equal-mass")
	f.StringVarP(&out, "output", "o", "", "directory for tradeoff.csv, tradeoff.json and tradeoff.svg (required)")
	f.BoolVar(&asJSON, "json", false, "print the grid's points as JSON")
	f.StringVar(&budgetFlag, "budget", "", "draw a file-size budget line in the chart (e.g. 8MiB)")
	cmd.MarkFlagRequired("heldout")
	cmd.MarkFlagRequired("output")
	return cmd
}

func parseFloats(s string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil || !(v >= 0) {
			return nil, fmt.Errorf("%q is not a number >= 0", f)
		}
		out = append(out, v)
	}
	return out, nil
}

func parseInts(s string) ([]int, error) {
	var out []int
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil {
			return nil, fmt.Errorf("%q is not a whole number", f)
		}
		out = append(out, v)
	}
	return out, nil
}
