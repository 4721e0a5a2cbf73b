package main

import (
	"errors"
	"fmt"
	"math"
	"os"

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

// shrinkResult compares a rewritten model with the one it came from.
type shrinkResult struct {
	inBytes, outBytes int64
	pplIn, pplOut     float64 // NaN without held-out text
	// the same without the predictions of <unk>
	pplInNoUnk, pplOutNoUnk float64
}

// measureInput measures the input model's file and, when heldout is
// given, its perplexity on it. Commands call it before writing anything,
// so that an output that replaces the input (-o naming the input) is
// still compared with the input.
func measureInput(in, heldout string) (shrinkResult, error) {
	r := shrinkResult{pplIn: math.NaN(), pplOut: math.NaN()}
	st, err := os.Stat(in)
	if err != nil {
		return r, err
	}
	r.inBytes = st.Size()
	if heldout != "" {
		if r.pplIn, r.pplInNoUnk, err = heldoutPerplexity(in, heldout); err != nil {
			return r, err
		}
	}
	return r, nil
}

// compareOutput adds the written output's size and perplexity to the
// input's measurements.
func (r shrinkResult) compareOutput(out, heldout string) (shrinkResult, error) {
	fi, err := os.Stat(out)
	if err != nil {
		return r, err
	}
	r.outBytes = fi.Size()
	if heldout != "" {
		if r.pplOut, r.pplOutNoUnk, err = heldoutPerplexity(out, heldout); err != nil {
			return r, err
		}
	}
	return r, nil
}

// report returns the comparison as the JSON report's fields.
func (r shrinkResult) report(model string) pipeline.ShrinkReport {
	v := pipeline.ShrinkReport{Model: model, BaselineFileBytes: r.inBytes, FileBytes: r.outBytes}
	if !math.IsNaN(r.pplIn) {
		v.SetPerplexities(r.pplIn, r.pplInNoUnk, r.pplOut, r.pplOutNoUnk)
	}
	return v
}

// perplexityLine is the human report's held-out line, or "".
func (r shrinkResult) perplexityLine() string {
	if math.IsNaN(r.pplIn) {
		return ""
	}
	return fmt.Sprintf("  held-out perplexity %.3f (was %.3f, %+.2f%%)\n", r.pplOut, r.pplIn, 100*(r.pplOut/r.pplIn-1))
}
