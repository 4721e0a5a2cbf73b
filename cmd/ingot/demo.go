package main

import (
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
)

func newDemoCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "demo [DIR]",
		Short: "Walk through the whole job on a bundled, invented scenario",
		Long: `Walk through the whole job on the bundled demo: spoken commands that rangers
of an invented wetland reserve give their handheld field unit. Writes the
demo text, its counts and the model into DIR (default ./ingot-demo) and
prints every step as the command you would type.`,
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
	for name, text := range map[string]string{"commands.txt": demoTraining, "heldout.txt": demoHeldout} {
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
	}{
		{"Count the n-grams of orders 1 to 3.",
			[]string{"count", "--order", "3", "-o", path("counts.tsv"), path("commands.txt")}},
		{"Estimate an interpolated modified Kneser-Ney model and write the binary model file.",
			[]string{"compile", "--method", "kneser-ney", "--order", "3", "-o", path("field.ingot"), path("counts.tsv")}},
		{"Score held-out commands the device has not seen (summary line).",
			[]string{"score", path("field.ingot"), path("heldout.txt")}},
		{"Explain one probability: how likely is \"on\" after \"turn the beacon\"?",
			[]string{"explain", path("field.ingot"), "turn the beacon on"}},
		{"Explain a word sequence never heard in training, to see the back-off at work.",
			[]string{"explain", path("field.ingot"), "navigate to the beacon"}},
	}
	for i, st := range steps {
		fmt.Fprintf(stdout, "\n%d. %s\n$ ingot %s\n", i+1, st.why, quoteArgs(st.args))
		out := stdout
		var tail *lastLine
		if st.args[0] == "score" {
			tail = &lastLine{}
			out = tail
		}
		if code := runContext(ctx, st.args, out, stderr); code != exitOK {
			return fmt.Errorf("demo: step %d failed (exit %d)", i+1, code)
		}
		if tail != nil {
			fmt.Fprintln(stdout, tail.last())
		}
		if out := outputOf(st.args); out != "" {
			if fi, err := os.Stat(out); err == nil {
				fmt.Fprintf(stdout, "   wrote %s: %d bytes\n", out, fi.Size())
			}
		}
	}
	fmt.Fprintf(stdout, "\nDone. The model is %s; try: ingot score %s\n", path("field.ingot"), path("field.ingot"))
	return nil
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

// lastLine keeps only the last line written to it.
type lastLine struct{ buf []byte }

func (l *lastLine) Write(p []byte) (int, error) {
	l.buf = append(l.buf, p...)
	if len(l.buf) > 1<<16 {
		l.buf = l.buf[len(l.buf)-4096:]
	}
	return len(p), nil
}

func (l *lastLine) last() string {
	s := strings.TrimRight(string(l.buf), "\n")
	if i := strings.LastIndexByte(s, '\n'); i >= 0 {
		s = s[i+1:]
	}
	return s
}
