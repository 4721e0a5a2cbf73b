package main

import (
	"bytes"
	"context"
	_ "embed"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/spf13/cobra"
)

// The demo corpus: invented spoken commands for the handheld field unit of
// the fictional Marrowfen wetland reserve (see demodata/generate.go).
var (
	//go:embed demodata/commands.txt
	demoTraining string
	//go:embed demodata/heldout.txt
	demoHeldout string
	//go:embed demodata/wordlist.txt
	demoWordList string
	//go:embed demodata/unit-logs.txt
	demoUnitLogs string
	//go:embed demodata/unit-heldout.txt
	demoUnitHeldout string
)

func newDemoCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "demo [DIR]",
		Short: "Walk through the whole job on a bundled, invented scenario",
		Long: `Walk through the whole job on the bundled demo: spoken commands that rangers
of an invented wetland reserve give their handheld field unit. Writes the
demo text, its counts and the model into DIR (default ./ingot-demo) and
prints every step as the command you would type. The model predicts the
unit's fixed word list and is adapted to one unit's own logs by
interpolation.`,
		Example: `  ingot demo
  ingot demo /tmp/field-demo`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := "ingot-demo"
			if len(args) == 1 {
				dir = args[0]
			}
			return runDemo(cmd.Context(), cmd.OutOrStdout(), cmd.ErrOrStderr(), dir)
		},
	}
}

func runDemo(ctx context.Context, stdout, stderr io.Writer, dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	path := func(name string) string { return filepath.Join(dir, name) }
	// A demo run starts afresh: its key pair from an earlier run would make
	// keygen refuse (it never overwrites a key).
	for _, name := range []string{"release.key", "release.pub"} {
		if err := os.Remove(path(name)); err != nil && !os.IsNotExist(err) {
			return fmt.Errorf("demo: %w", err)
		}
	}
	for name, text := range map[string]string{"commands.txt": demoTraining, "heldout.txt": demoHeldout,
		"wordlist.txt": demoWordList, "unit-logs.txt": demoUnitLogs, "unit-heldout.txt": demoUnitHeldout} {
		if err := os.WriteFile(path(name), []byte(text), 0o644); err != nil {
			return fmt.Errorf("demo: %w", err)
		}
	}
	fmt.Fprintf(stdout, "Demo: spoken commands for the handheld unit of an invented wetland reserve.\n")
	fmt.Fprintf(stdout, "Training text %s: %d sentences; held-out text %s: %d sentences.\n",
		path("commands.txt"), strings.Count(demoTraining, "\n"), path("heldout.txt"), strings.Count(demoHeldout, "\n"))
	steps := []struct {
		why  string
		args []string
		show string // print only the lines holding one of these |-separated pieces (empty: all)
	}{
		{"Count the n-grams of orders 1 to 3 over the unit's fixed word list (wordlist.txt): every other word counts as <unk>.",
			[]string{"count", "--order", "3", "--vocabulary", path("wordlist.txt"), "-o", path("counts.bin"), path("commands.txt")}, ""},
		{"Estimate an interpolated modified Kneser-Ney model over the same list (listed words never heard, such as \"spoonbill\", stay predictable) and write the binary model file.",
			[]string{"compile", "--method", "kneser-ney", "--order", "3", "--vocabulary", path("wordlist.txt"), "-o", path("field.ingot"), path("counts.bin")}, ""},
		{"Score held-out commands the device has not seen (the summary).",
			[]string{"score", "--summary-only", path("field.ingot"), path("heldout.txt")}, ""},
		{"Adapt to one unit: count and compile the night patrol's own logs over the same word list.",
			[]string{"count", "--order", "3", "--vocabulary", path("wordlist.txt"), "-o", path("unit-counts.bin"), path("unit-logs.txt")}, ""},
		{"",
			[]string{"compile", "--method", "witten-bell", "--order", "3", "--vocabulary", path("wordlist.txt"), "-o", path("unit.ingot"), path("unit-counts.bin")}, "wrote"},
		{"Interpolate the general model with the unit's own into one back-off model, the weights fitted by EM on held-out logs.",
			[]string{"interpolate", "--fit", path("unit-heldout.txt"), "-o", path("adapted.ingot"), path("field.ingot"), path("unit.ingot")}, ""},
		{"The device has 16 KB for the model: prune by relative entropy to fit, with 8-bit codebooks.",
			[]string{"prune", "--max-size", "16KB", "--bits", "8", "--heldout", path("unit-heldout.txt"), "-o", path("device.ingot"), path("adapted.ingot")}, ""},
		{"Prove the shipped file intact and every context normalised (the release check).",
			[]string{"verify", path("device.ingot")}, "verify |pass"},
		{"Make a signing key and sign the release.",
			[]string{"keygen", "-o", path("release")}, ""},
		{"",
			[]string{"sign", "--key", path("release.key"), path("device.ingot")}, ""},
		{"Check the signature as a device or pipeline would.",
			[]string{"verify", "--public-key", path("release.pub"), path("device.ingot")}, "verify |signature"},
		{"Look inside the shipped file.",
			[]string{"inspect", "--stats", path("device.ingot")}, ""},
		{"Explain one probability: how likely is \"on\" after \"turn the beacon\"?",
			[]string{"explain", path("device.ingot"), "turn", "the", "beacon", "on"}, ""},
		{"Explain a word sequence never heard in training, to see the back-off at work.",
			[]string{"explain", path("device.ingot"), "navigate", "to", "the", "beacon"}, ""},
	}
	n := 0
	for _, st := range steps {
		if st.why != "" {
			n++
			fmt.Fprintf(stdout, "\n%d. %s\n", n, st.why)
		}
		fmt.Fprintf(stdout, "$ ingot %s\n", quoteArgs(st.args))
		var out bytes.Buffer
		if code := runContext(ctx, st.args, &out, stderr); code != exitOK {
			stdout.Write(out.Bytes())
			return fmt.Errorf("demo: step %d (ingot %s) failed with exit %d", n, st.args[0], code)
		}
		text := out.String()
		if st.show != "" {
			lines := strings.Split(strings.TrimRight(text, "\n"), "\n")
			var kept []string
			for _, l := range lines {
				for _, piece := range strings.Split(st.show, "|") {
					if strings.Contains(l, piece) {
						kept = append(kept, l)
						break
					}
				}
			}
			text = strings.Join(kept, "\n") + "\n"
		}
		io.WriteString(stdout, text)
		if out := outputOf(st.args); out != "" && st.args[0] == "count" {
			if fi, err := os.Stat(out); err == nil {
				fmt.Fprintf(stdout, "   wrote %s: %d bytes\n", out, fi.Size())
			}
		}
	}
	fmt.Fprintf(stdout, "\nDone. %s is the shipped model: over the unit's word list, adapted to its logs, pruned to the budget, quantized, verified and signed.\nTry: %s inspect --next \"turn the\" %s\n", path("device.ingot"), invokedAs(os.Args[0]), path("device.ingot"))
	return nil
}

// invokedAs is how to run ingot again the way it was run now, so that the
// demo's closing hint works as printed: "go run ./cmd/ingot" under go run
// (whose binary lives in a temporary build directory), the path as typed
// for a binary run by path, and the bare name for one found on PATH.
func invokedAs(arg0 string) string {
	switch {
	case strings.Contains(filepath.ToSlash(arg0), "/go-build"):
		return "go run ./cmd/ingot"
	case strings.ContainsRune(arg0, filepath.Separator) || strings.ContainsRune(arg0, '/'):
		return arg0
	}
	return filepath.Base(arg0)
}

// outputOf returns the value of -o in args, if any.
func outputOf(args []string) string {
	for i, a := range args {
		if a == "-o" && i+1 < len(args) {
			return args[i+1]
		}
	}
	return ""
}

func quoteArgs(args []string) string {
	q := make([]string, len(args))
	for i, a := range args {
		if strings.ContainsAny(a, " \t<>") {
			a = "\"" + a + "\""
		}
		q[i] = a
	}
	return strings.Join(q, " ")
}
