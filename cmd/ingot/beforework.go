package main

import (
	"fmt"
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
