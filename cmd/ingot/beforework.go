package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"

	"ingot/compile/input"
	"ingot/compile/text"
	"ingot/format/files"
)

// checkOutput refuses, before any work, an output that cannot be written or
// that is one of the command's inputs (files.CheckOutput).
func checkOutput(command, out string, inputs ...string) error {
	if err := files.CheckOutput(out, inputs...); err != nil {
		return fmt.Errorf("%s: %w", command, err)
	}
	return nil
}

// checkOutputDir is checkOutput for a directory of outputs (names inside
// it): an existing directory is checked through the first name, a missing
// one through itself (its parent must take it).
func checkOutputDir(command, dir string, names []string, inputs ...string) error {
	if st, err := os.Stat(dir); err == nil {
		if !st.IsDir() {
			return fmt.Errorf("%s: output directory %s is %s", command, dir, files.Kind(st.Mode()))
		}
		for _, name := range names {
			if err := checkOutput(command, filepath.Join(dir, name), inputs...); err != nil {
				return err
			}
		}
		return nil
	}
	return checkOutput(command, dir, inputs...)
}

// notToStdout refuses "-o -" for a command whose report measures or
// scores the file it wrote (prune, quantize, interpolate): standard output
// cannot be measured, and the report would be mixed into the model.
func notToStdout(command, out string) error {
	if out == "-" {
		return fmt.Errorf("%s: -o -: the report measures the written file; name a file", command)
	}
	return nil
}

// reportTo is where a command that writes out prints its report: standard
// error when the output itself goes to standard output ("-o -"), so that
// the output stream holds the output alone.
func reportTo(cmd interface {
	OutOrStdout() io.Writer
	ErrOrStderr() io.Writer
}, out string) io.Writer {
	if out == "-" {
		return cmd.ErrOrStderr()
	}
	return cmd.OutOrStdout()
}

// checkHeldout reads held-out text through once, before the work, so that
// a marker in it or an empty text is refused before anything is written.
func checkHeldout(command, path string) error {
	if path == "" {
		return nil
	}
	r, err := input.Open(path)
	if err != nil {
		return fmt.Errorf("%s: --heldout: %w", command, err)
	}
	defer r.Close()
	if err := text.HeldOut(path, r, func([]string, int) error { return nil }); err != nil {
		return fmt.Errorf("%s: --heldout: %w", command, err)
	}
	return nil
}
