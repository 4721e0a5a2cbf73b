package main

import (
	"fmt"
	"io"
	"slices"
	"strconv"
	"text/tabwriter"

	"ingot/compile/budget"
	"ingot/compile/estimate"
	"ingot/compile/pipeline"
)

// budgetFlags are compile's options for writing a model pruned to a size.
type budgetFlags struct {
	maxSize  string
	heldout  string
	rankWith string
	qf       quantizeFlags
}

func (b *budgetFlags) set() bool { return b.maxSize != "" }

// check rejects bad options before any work.
func (b *budgetFlags) check() error {
	if !b.set() {
		if b.heldout != "" || b.rankWith != "" || b.qf.bits != 0 {
			return fmt.Errorf("compile: --heldout, --rank-with and --bits need --max-size (to quantize a finished model: ingot quantize)")
		}
		return nil
	}
	if _, err := parseSize(b.maxSize); err != nil {
		return fmt.Errorf("compile: --max-size: %w", err)
	}
	if b.rankWith != "" && !slices.Contains(estimate.Methods, estimate.Method(b.rankWith)) {
		return fmt.Errorf("compile: --rank-with %q: want katz, absolute, witten-bell or kneser-ney", b.rankWith)
	}
	if b.qf.bits != 0 {
		if _, err := b.qf.options("compile"); err != nil {
			return err
		}
	}
	return nil
}

// options returns the budget's options (all but the estimate).
func (b *budgetFlags) options() (budget.Options, error) {
	bo := budget.Options{Ranking: estimate.Method(b.rankWith)}
	var err error
	if bo.MaxBytes, err = parseSize(b.maxSize); err != nil {
		return bo, fmt.Errorf("compile: --max-size: %w", err)
	}
	if b.qf.bits != 0 {
		if bo.Quantize, err = b.qf.options("compile"); err != nil {
			return bo, err
		}
	}
	if b.heldout != "" {
		if bo.Heldout, err = pipeline.ReadSentences(b.heldout); err != nil {
			return bo, fmt.Errorf("compile: --heldout: %w", err)
		}
	}
	return bo, nil
}

func printBudgetReport(w io.Writer, res *budget.Result, maxBytes int64, method estimate.Method, order int, out string, asJSON bool) error {
	if asJSON {
		return writeJSON(w, pipeline.NewBudgetReport(out, method, maxBytes, res))
	}
	fmt.Fprintf(w, "wrote %s (%s, order %d): %s, budget %s\n", out, method, res.Chosen.Order,
		humanSize(res.Chosen.FileBytes), humanSize(maxBytes))
	fmt.Fprintf(w, "n-grams ranked by relative entropy on the %s model; threshold %.6g nats\n", res.Ranking, res.Chosen.Threshold)
	for k, n := range res.Chosen.NGrams {
		fmt.Fprintf(w, "  order %d: kept %d of %d n-grams\n", k+1, n, res.Report.Orders[k].NGrams)
	}
	if len(res.Candidates) > 1 {
		fmt.Fprintln(w, "orders compared at this budget (held-out perplexity before quantization):")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "order\tform\tfile size\tperplexity\t\t")
		for _, c := range res.Candidates {
			form := c.Form
			if form == "" {
				form = "-"
			}
			if c.Problem != "" {
				fmt.Fprintf(tw, "%d\t%s\t-\t-\t%s\t\n", c.Order, form, c.Problem)
				continue
			}
			mark := ""
			if c.Order == res.Chosen.Order && c.Form == res.Chosen.Form {
				mark = "chosen"
			}
			fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%s\t\n", c.Order, form, humanSize(c.FileBytes), strconv.FormatFloat(c.Perplexity, 'f', 3, 64), mark)
		}
		tw.Flush()
		fmt.Fprintf(w, "held-out perplexity of the written model: %s\n", strconv.FormatFloat(res.Perplexity, 'f', 3, 64))
		if res.Chosen.Order < order {
			fmt.Fprintf(w, "a model of order %d fits %s better than order %d: wrote order %d\n",
				res.Chosen.Order, humanSize(maxBytes), order, res.Chosen.Order)
		}
	}
	return nil
}
