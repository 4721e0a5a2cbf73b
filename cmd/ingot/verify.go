package main

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"

	"ingot/compile/counts"
	"ingot/compile/input"
	"ingot/format"
	"ingot/format/keys"
	"ingot/verify"
	"ingot/verify/gate"
)

type verifyFlags struct {
	publicKey   string
	asJSON      bool
	tolerance   float64
	baseline    string
	heldout     string
	maxIncrease float64
}

func newVerifyCmd() *cobra.Command {
	var f verifyFlags
	cmd := &cobra.Command{
		Use:   "verify [--json] [--tolerance T] MODEL [--baseline OLD --heldout TEXT [--max-perplexity-increase PCT]]",
		Short: "Prove a model file intact and normalised; gate a release against the previous model",
		Long: `Check every byte of a model file and that it is a proper model:

  header          magic, format version, section count, file length, header checksum
  directory       every section inside the file, aligned, in order, once
  checksums       the CRC-32C of every section
  digest          the SHA-256 content digest recorded at build time
  padding         every byte between and after the sections is zero
  opens           the format reader accepts the file
  vocabulary      words valid UTF-8, strictly sorted
  prefix-closure  child ranges well formed: every stored n-gram's context is stored
  ids             every word id inside the vocabulary
  order           the entries under every context sorted
  values          no NaN or infinity (but the unigram <s>), no probability
                  above 1, back-off weights finite
  suffix-closure  a model flagged suffix-closed is
  normalisation   the empty context and every stored context h give the
                  vocabulary (all words but <s>) total probability
                  S(h) = 1 within the tolerance (default 1e-5; 1e-3 for
                  a model with quantized columns, whatever it records)

Given a binary count file (told by its first bytes), verify reads every
byte as compile does and runs two checks: "header" (magic, layout version,
header checksum, the word list) and "blocks" (every block's CRC-32C and
zstd frame, entries sorted, word ids, no zero count, and the end record's
totals against the blocks). Only --json applies; its keys are those of
'ingot inspect --json' on a count file plus ok, failed and checks.

A check that needs a sound file is "not run" when an earlier one fails; a
damaged file never crashes verify, and each problem names the section and
byte offset (and the n-gram) where it lies.

With --public-key, verify also runs the check "signature": the model is
signed (ingot sign) by that key and not one byte of its content changed
since.

With --baseline and --heldout, verify also gates a release: it scores the
held-out text with both models and fails the check "release-gate" when the
candidate's perplexity is more than --max-perplexity-increase percent (default 1)
above the baseline's. It also reports the n-grams added, removed and changed
(compared by their words) and the mean KL(baseline || candidate), in nats,
between the two models' next-word distributions at every held-out
prediction.

Exit codes: 0 every check passed, 1 a check failed (named in the message),
2 bad usage, or a file that cannot be read as a model at all.`,
		Example: `  ingot verify field.ingot
  ingot verify --json field.ingot
  ingot verify counts.bin
  ingot verify --public-key release.pub field.ingot
  ingot verify new.ingot --baseline shipped.ingot --heldout dev.txt --max-perplexity-increase 0.5`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runVerify(cmd, args[0], &f)
		},
	}
	fl := cmd.Flags()
	fl.BoolVar(&f.asJSON, "json", false, "print the report as one JSON object")
	fl.Float64Var(&f.tolerance, "tolerance", 0, "largest |S(h) - 1| allowed for any context (default: 1e-5, or 1e-3 for a quantized model)")
	fl.StringVar(&f.publicKey, "public-key", "", "also check the model's signature against this public key (from 'ingot keygen')")
	fl.StringVar(&f.baseline, "baseline", "", "the model this one replaces: compare them on --heldout")
	fl.StringVar(&f.heldout, "heldout", "", "held-out text for the release gate, one sentence per line (.gz/.zst read directly)")
	fl.Float64Var(&f.maxIncrease, "max-perplexity-increase", gate.DefaultMaxIncreasePercent, "largest perplexity increase over the baseline, in percent, that the release gate accepts")
	return cmd
}

func runVerify(cmd *cobra.Command, model string, f *verifyFlags) error {
	fl := cmd.Flags()
	if fl.Changed("tolerance") && !(f.tolerance > 0 && !math.IsInf(f.tolerance, 0)) {
		return fmt.Errorf("verify: --tolerance %v must be a number above 0", f.tolerance)
	}
	if math.IsNaN(f.maxIncrease) || math.IsInf(f.maxIncrease, 0) {
		return fmt.Errorf("verify: --max-perplexity-increase %v must be a finite number of percent", f.maxIncrease)
	}
	gated := f.baseline != "" || f.heldout != ""
	if gated && (f.baseline == "" || f.heldout == "") {
		return fmt.Errorf("verify: the release gate needs both --baseline and --heldout")
	}
	if fl.Changed("max-perplexity-increase") && !gated {
		return fmt.Errorf("verify: --max-perplexity-increase needs --baseline and --heldout")
	}

	if counts.IsBinaryFile(model) {
		return runVerifyCounts(cmd, model, f)
	}

	// Open the gate's inputs first, so that bad usage fails before the work.
	var base *format.Model
	var text io.ReadCloser
	if gated {
		var err error
		if base, err = openModel(f.baseline); err != nil {
			return fmt.Errorf("verify: baseline %w", err)
		}
		defer base.Close()
		if text, err = input.Open(f.heldout); err != nil {
			return fmt.Errorf("verify: --heldout: %w", err)
		}
		defer text.Close()
	}

	var pub []byte
	if f.publicKey != "" {
		key, err := keys.ReadPublic(f.publicKey)
		if err != nil {
			return fmt.Errorf("verify: --public-key: %w", err)
		}
		pub = key
	}

	rep, err := verify.File(model, verify.Options{Tolerance: f.tolerance})
	if err != nil {
		if counts.IsTextFile(model) {
			return fmt.Errorf("verify: %s is a text count file (a count, a tab, the words): verify reads models and binary count files; compile checks a text count file line by line as it reads it", model)
		}
		return fmt.Errorf("verify: %w", err)
	}
	if pub != nil {
		rep.Checks = append(rep.Checks, verify.Signature(model, pub))
	}
	var res *gate.Result
	if gated {
		var check verify.Check
		// On a terminal, a line that counts the held-out sentences done,
		// redrawn every half second.
		tty, start, done := newProgress(cmd.ErrOrStderr()).w, time.Now(), 0
		var shown time.Time
		progress := func(sentences int) {
			if done = sentences; tty != nil && time.Since(shown) >= time.Second/2 {
				shown = time.Now()
				fmt.Fprintf(tty, "\rrelease gate: %d held-out sentences scored and compared, %.0fs", sentences, time.Since(start).Seconds())
			}
		}
		check, res, err = verify.ReleaseGate(rep, model, verify.Gate{
			Baseline: base, BaselineName: f.baseline, Heldout: text, HeldoutName: f.heldout,
			MaxIncreasePercent: f.maxIncrease, Progress: progress,
		})
		if tty != nil {
			fmt.Fprintf(tty, "\rrelease gate: %d held-out sentences scored and compared in %.1fs\n", done, time.Since(start).Seconds())
		}
		if err != nil {
			return fmt.Errorf("verify: %w", err)
		}
		rep.Checks = append(rep.Checks, check)
	}

	w := bufio.NewWriter(cmd.OutOrStdout())
	if f.asJSON {
		err = printVerifyJSON(w, model, rep, res, f)
	} else {
		err = printVerifyText(w, model, rep, res, f)
	}
	if err == nil {
		err = w.Flush()
	}
	if err != nil {
		return err
	}
	if failed := rep.Err(); failed != nil {
		return checkFailed{fmt.Errorf("verify %s: %w", model, failed)}
	}
	return nil
}

// runVerifyCounts checks a binary count file: every byte, as compile reads
// it. Only --json applies.
func runVerifyCounts(cmd *cobra.Command, path string, f *verifyFlags) error {
	for _, name := range []string{"tolerance", "public-key", "baseline", "heldout", "max-perplexity-increase"} {
		if cmd.Flags().Changed(name) {
			return fmt.Errorf("verify: %s is a count file: --%s applies to models only", path, name)
		}
	}
	rep, err := verify.CountFile(path)
	if err != nil {
		return fmt.Errorf("verify: %w", err)
	}
	w := bufio.NewWriter(cmd.OutOrStdout())
	if f.asJSON {
		err = writeJSON(w, verify.NewJSONCountReport(rep))
	} else {
		err = printVerifyChecks(w, "count file "+path, rep.Failed(), rep.Checks)
	}
	if err == nil {
		err = w.Flush()
	}
	if err != nil {
		return err
	}
	for _, c := range rep.Checks {
		if c.Status == verify.Fail {
			return checkFailed{fmt.Errorf("verify %s: check %s failed: %s", path, c.Name, c.Problems[0])}
		}
	}
	return nil
}

// printVerifyChecks prints the verdict on what, the table of checks and
// the problems they list.
func printVerifyChecks(w io.Writer, what string, failed []string, checks []verify.Check) error {
	if len(failed) > 0 {
		fmt.Fprintf(w, "verify %s: FAILED (%s)\n\n", what, strings.Join(failed, ", "))
	} else {
		fmt.Fprintf(w, "verify %s: ok\n\n", what)
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "check\tstatus\tdetail")
	for _, c := range checks {
		fmt.Fprintf(tw, "%s\t%s\t%s\n", c.Name, c.Status, c.Detail)
	}
	tw.Flush()

	var problems []verify.Check
	for _, c := range checks {
		if len(c.Problems) > 0 {
			problems = append(problems, c)
		}
	}
	if len(problems) > 0 {
		fmt.Fprintln(w, "\nproblems")
		tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
		for _, c := range problems {
			for i, p := range c.Problems {
				name := c.Name
				if i > 0 {
					name = ""
				}
				fmt.Fprintf(tw, "  %s\t%s\n", name, p)
			}
			if more := c.Count - len(c.Problems); more > 0 {
				fmt.Fprintf(tw, "  \t... and %d more\n", more)
			}
		}
		tw.Flush()
	}
	return nil
}

// printVerifyText prints the report as aligned text.
func printVerifyText(w io.Writer, model string, rep *verify.Report, res *gate.Result, f *verifyFlags) error {
	printVerifyChecks(w, model, rep.Failed(), rep.Checks)

	if n := rep.Normalisation; n != nil {
		fmt.Fprintf(w, "\nnormalisation (tolerance %.3g)\n", n.Tolerance)
		fmt.Fprintf(w, "  %-20s %12d\n", "contexts checked", n.Contexts)
		fmt.Fprintf(w, "  %-20s %12.3g\n", "largest |S - 1|", n.MaxDeviation)
		fmt.Fprintf(w, "  %-20s %12d\n", "over the tolerance", n.Exceeding)
		fmt.Fprintf(w, "\n  %-20s %12s\n", "|S - 1|", "contexts")
		for b, count := range n.Histogram {
			fmt.Fprintf(w, "  %-20s %12d\n", bucketLabel(b), count)
		}
		fmt.Fprintf(w, "\n  worst contexts\n  %-10s %-16s %s\n", "|S - 1|", "S", "context")
		for _, c := range n.Worst {
			fmt.Fprintf(w, "  %-10.3g %-16.12f %s\n", c.Deviation(), c.Sum, contextLabel(c.Context))
		}
	}

	if res != nil {
		fmt.Fprintf(w, "\nrelease gate: against the baseline %s on %s (%d sentences, %d predictions)\n",
			f.baseline, f.heldout, res.Sentences, res.Predictions)
		fmt.Fprintf(w, "  %-20s %12s %12s %10s\n", "", "candidate", "baseline", "change")
		fmt.Fprintf(w, "  %-20s %12.3f %12.3f %+9.2f%%\n", "perplexity", res.Candidate.Perplexity, res.Baseline.Perplexity, res.IncreasePercent)
		fmt.Fprintf(w, "  %-20s %12.3f %12.3f\n", "without <unk>", res.Candidate.PerplexityWithoutUnknown, res.Baseline.PerplexityWithoutUnknown)
		fmt.Fprintf(w, "  %-20s %12d %12d\n", "<unk> predictions", res.Candidate.UnknownPredictions, res.Baseline.UnknownPredictions)
		fmt.Fprintf(w, "  %-20s %12s %12s %+9g%%\n", "limit", "", "", f.maxIncrease)
		fmt.Fprintf(w, "\n  %-20s %12s %12s %12s\n", "n-grams of order", "added", "removed", "changed")
		for _, o := range res.Orders {
			fmt.Fprintf(w, "  %-20d %12d %12d %12d\n", o.Order, o.Added, o.Removed, o.Changed)
		}
		fmt.Fprintf(w, "  %-20s %12d %12d %12d\n", "all", res.Added, res.Removed, res.Changed)
		fmt.Fprintf(w, "\n  mean KL(baseline || candidate) per prediction: %.6g nats, over %d events\n", res.MeanKL, res.Events)
	}
	return nil
}

// bucketLabel names a histogram bucket: "below 1e-09", "1e-09 to 1e-08",
// ..., "1e-03 and above".
func bucketLabel(b int) string {
	lower, upper := verify.BucketBounds(b)
	switch {
	case lower == 0:
		return fmt.Sprintf("below %.0e", upper)
	case math.IsInf(upper, 1):
		return fmt.Sprintf("%.0e and above", lower)
	}
	return fmt.Sprintf("%.0e to %.0e", lower, upper)
}

func contextLabel(words []string) string {
	if len(words) == 0 {
		return "(the empty context)"
	}
	return strings.Join(words, " ")
}

// printVerifyJSON prints the report as one JSON object (verify.JSONReport;
// see the README's "Verifying a model" for the keys).
func printVerifyJSON(w io.Writer, model string, rep *verify.Report, res *gate.Result, f *verifyFlags) error {
	return writeJSON(w, verify.NewJSONReport(model, rep, f.tolerance, res, verify.GateSettings{
		Baseline: f.baseline, Heldout: f.heldout, MaxIncreasePercent: f.maxIncrease}))
}
