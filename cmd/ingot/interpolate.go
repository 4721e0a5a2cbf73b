package main

import (
	"fmt"
	"io"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"ingot/compile/interpolate"
	"ingot/compile/pipeline"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/format/score"
	"ingot/inspect"
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
			var w []float64
			if weights != "" {
				var err error
				if w, err = parseFloats(weights); err != nil {
					return fmt.Errorf("interpolate: --weights: %w", err)
				}
			}
			if heldout == "" {
				heldout = fit
			}
			if err := checkOutput("interpolate", out, append([]string{fit, heldout}, args...)...); err != nil {
				return err
			}
			// Read every input before writing anything.
			var fitText, evalText [][]string
			if fit != "" {
				var err error
				if fitText, err = readText("--fit", fit); err != nil {
					return fmt.Errorf("interpolate: %w", err)
				}
			}
			if heldout == fit {
				evalText = fitText
			} else {
				var err error
				if evalText, err = readText("--heldout", heldout); err != nil {
					return fmt.Errorf("interpolate: %w", err)
				}
			}
			pr := newProgress(cmd.ErrOrStderr())
			defer pr.done()
			var models []*tables.Tables
			for _, path := range args {
				pr.step("reading %s", path)
				t, err := readTables(path)
				if err != nil {
					return fmt.Errorf("interpolate: %w", err)
				}
				models = append(models, t)
			}
			mix, err := interpolate.New(models)
			if err != nil {
				return fmt.Errorf("interpolate: %w", err)
			}
			rep := interpolateReport{Model: out, Inputs: args, Order: mix.Order(), Vocabulary: len(mix.Vocab())}
			if w != nil {
				if err := mix.CheckWeights(w); err != nil {
					return fmt.Errorf("interpolate: --weights: %w", err)
				}
			}
			if fit != "" {
				pr.step("fitting the weights on %s", fit)
				if w, rep.Iterations, err = mix.Score(fitText).Fit(); err != nil {
					return fmt.Errorf("interpolate: --fit %s: %w", fit, err)
				}
				rep.Fitted = true
			}
			if w == nil {
				w = make([]float64, len(models))
				for i := range w {
					w[i] = 1 / float64(len(models))
				}
			}
			rep.Weights = w
			pr.step("building the interpolated model")
			t, err := mix.Build(w, args)
			if err != nil {
				return fmt.Errorf("interpolate: %w", err)
			}
			t.Info.ToolVersion = version
			if t.Info.BuildTime, err = pipeline.BuildTime(); err != nil {
				return fmt.Errorf("interpolate: %w", err)
			}
			pr.step("writing %s", out)
			if err := writeOutput(cmd.Context(), out, cmd.OutOrStdout(), func(wr io.Writer) error {
				return format.Write(wr, t)
			}); err != nil {
				return err
			}
			for k := 1; k <= t.Order(); k++ {
				rep.Orders = append(rep.Orders, orderNGrams{Order: k, NGrams: t.Len(k)})
				rep.NGramsPerOrder = append(rep.NGramsPerOrder, t.Len(k))
			}
			if heldout != "" {
				pr.step("scoring %s", heldout)
				h := mix.Score(evalText)
				p := &perplexities{Text: heldout, Predictions: h.Predictions()}
				for i := range models {
					p.Inputs = append(p.Inputs, inspect.Number(h.Perplexity(interpolate.Unit(len(models), i))))
				}
				p.Mixture = inspect.Number(h.Perplexity(w))
				written, err := filePerplexity(out, evalText)
				if err != nil {
					return fmt.Errorf("interpolate: %w", err)
				}
				p.Written = inspect.Number(written)
				rep.Perplexity = p
			}
			pr.done()
			return rep.print(cmd.OutOrStdout(), asJSON)
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

// readText reads held-out text given with the named option.
func readText(option, path string) ([][]string, error) {
	s, err := readSentences(path)
	if err != nil {
		return nil, fmt.Errorf("%s: %s", option, strings.TrimPrefix(err.Error(), "--heldout: "))
	}
	return s, nil
}

// filePerplexity scores the sentences with the model file at path.
func filePerplexity(path string, sents [][]string) (float64, error) {
	m, err := openModel(path)
	if err != nil {
		return 0, err
	}
	defer m.Close()
	sc := score.NewScorer(m)
	var sum score.Summary
	for _, s := range sents {
		sum.Add(sc.Score(s))
	}
	return sum.Perplexity(), nil
}

type perplexities struct {
	Text        string           `json:"text"`
	Predictions int              `json:"predictions"`
	Inputs      []inspect.Number `json:"inputs"`
	Mixture     inspect.Number   `json:"mixture"`
	Written     inspect.Number   `json:"written"`
}

type interpolateReport struct {
	Model      string        `json:"model"`
	Inputs     []string      `json:"inputs"`
	Weights    []float64     `json:"weights"`
	Fitted     bool          `json:"fitted"`
	Iterations int           `json:"iterations,omitempty"`
	Order      int           `json:"order"`
	Vocabulary int           `json:"vocabulary_size"`
	Perplexity *perplexities `json:"heldout_perplexity,omitempty"`
	Orders     []orderNGrams `json:"orders"`
	// NGramsPerOrder repeats Orders as a plain list, the form verify
	// reports.
	NGramsPerOrder []int `json:"ngrams_per_order"`
}

// orderNGrams is one order's n-gram count in a report.
type orderNGrams struct {
	Order  int `json:"order"`
	NGrams int `json:"ngrams"`
}

func (r *interpolateReport) print(w io.Writer, asJSON bool) error {
	if asJSON {
		return writeJSON(w, r)
	}
	how := "given"
	if r.Fitted {
		how = fmt.Sprintf("fitted by EM in %d steps", r.Iterations)
	}
	fmt.Fprintf(w, "wrote %s (interpolated, order %d, %d words; weights %s)\n", r.Model, r.Order, r.Vocabulary, how)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	if r.Perplexity != nil {
		fmt.Fprintf(tw, "model\tweight\tperplexity on %s (%d predictions)\n", r.Perplexity.Text, r.Perplexity.Predictions)
	} else {
		fmt.Fprintf(tw, "model\tweight\t\n")
	}
	for i, in := range r.Inputs {
		ppl := ""
		if r.Perplexity != nil {
			ppl = fmt.Sprintf("%.3f", float64(r.Perplexity.Inputs[i]))
		}
		fmt.Fprintf(tw, "%s\t%.6f\t%s\n", in, r.Weights[i], ppl)
	}
	if r.Perplexity != nil {
		fmt.Fprintf(tw, "exact mixture\t\t%.3f\n", float64(r.Perplexity.Mixture))
		fmt.Fprintf(tw, "written model\t\t%.3f (%+.2f%%)\n", float64(r.Perplexity.Written),
			100*(float64(r.Perplexity.Written)/float64(r.Perplexity.Mixture)-1))
	}
	tw.Flush()
	var ng []string
	for _, o := range r.Orders {
		ng = append(ng, fmt.Sprintf("order %d: %d", o.Order, o.NGrams))
	}
	fmt.Fprintf(w, "n-grams  %s\n", strings.Join(ng, ", "))
	return nil
}
