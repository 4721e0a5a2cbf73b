package main

import (
	"errors"
	"fmt"

	"ingot/compile/pipeline"
	"ingot/compile/tables"
)

// readUnquantized reads the model at path into memory for a command that
// rewrites it (prune, quantize, tradeoff), refusing a quantized model: its
// values are already rounded, so work on the model it came from.
func readUnquantized(command, path string) (*tables.Tables, error) {
	t, err := readTables(path)
	if err != nil {
		return nil, err
	}
	if errors.Is(pipeline.Unquantized(t), pipeline.ErrQuantized) {
		return nil, fmt.Errorf("%s: %s is quantized already; %s the unquantized model", command, path, command)
	}
	return t, nil
}

// compareWritten measures the written output against the input measured
// before it (pipeline.Measure).
func compareWritten(before pipeline.Measured, out, heldout string) (pipeline.Comparison, error) {
	after, err := pipeline.Measure(out, heldout)
	return pipeline.Comparison{Baseline: before, Result: after}, err
}

// perplexityLine is the human report's held-out line, or "".
func perplexityLine(c pipeline.Comparison) string {
	if !c.Result.Scored {
		return ""
	}
	return fmt.Sprintf("  held-out perplexity %.3f (was %.3f, %+.2f%%)\n", c.Result.Perplexity, c.Baseline.Perplexity, c.PerplexityChange())
}
