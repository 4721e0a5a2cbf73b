package pipeline

import (
	"fmt"
	"slices"

	"ingot/compile/budget"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/quantize"
)

// Prune says how to shrink a finished model by relative-entropy pruning
// (Stolcke 1998, package prune).
type Prune struct {
	// DropBelow is the threshold in nats: n-grams whose removal costs less
	// go. Used when MaxBytes is 0.
	DropBelow float64
	// MaxBytes, when not 0, is the budget: the least pruning whose written
	// file (once signed) fits it; MaxSize is the budget as given, recorded.
	MaxBytes int64
	MaxSize  string
	// Quantize, when Bits is not 0, quantizes the pruned model (the budget
	// then applies to the quantized file).
	Quantize quantize.Options
	// Command is the provenance of this step, recorded in the model.
	Command tables.Command
	// Progress, when set, is told about each step.
	Progress func(step string)
}

// Pruned is what Prune.Run built.
type Pruned struct {
	Model *tables.Tables
	// Threshold is the threshold used: DropBelow, or the one the budget
	// chose.
	Threshold float64
}

// Run prunes t, which must not be quantized (see Unquantized). The
// model's history gains the threshold and the n-grams kept per order, its
// provenance the command.
func (o Prune) Run(t *tables.Tables) (*Pruned, error) {
	if err := Unquantized(t); err != nil {
		return nil, err
	}
	o.progress("scoring every n-gram by relative entropy")
	scores := prune.EntropyScores(t)
	shaped := func(threshold float64, keep [][]bool) *tables.Tables {
		p := prune.Select(t, keep)
		p.Info.History = append(slices.Clip(p.Info.History), fmt.Sprintf(
			"pruned by relative entropy below %.6g nats (kept %s n-grams per order)", threshold, JoinInts(prune.Kept(keep))))
		p.Info.Commands = append(slices.Clip(p.Info.Commands), o.Command)
		return p
	}
	if o.MaxBytes != 0 {
		o.progress("choosing the threshold and building the model")
		p, threshold, _, _, err := budget.FitFinished(t, scores, o.MaxBytes, o.Quantize, shaped,
			func(th float64, kp [][]bool) (*tables.Tables, error) {
				return budget.Finish(shaped(th, kp), o.Quantize)
			})
		if err != nil {
			return nil, &BudgetError{MaxSize: o.MaxSize, Err: err}
		}
		return &Pruned{Model: p, Threshold: threshold}, nil
	}
	o.progress("recomputing back-off weights and quantizing")
	keep := prune.Keep(t, scores, o.DropBelow)
	p, err := budget.Finish(shaped(o.DropBelow, keep), o.Quantize)
	if err != nil {
		return nil, err
	}
	return &Pruned{Model: p, Threshold: o.DropBelow}, nil
}

func (o Prune) progress(s string) {
	if o.Progress != nil {
		o.Progress(s)
	}
}

// ErrQuantized is the refusal to rewrite a quantized model: its values are
// already rounded, so prune, quantize or trade off the model it came from.
var ErrQuantized = fmt.Errorf("the model is quantized already")

// Unquantized returns ErrQuantized for a quantized model.
func Unquantized(t *tables.Tables) error {
	if t.Info.Quantization != nil {
		return ErrQuantized
	}
	return nil
}

// Quantize quantizes t (see quantize.Model), which must not be quantized
// already, and records the command in its provenance.
func Quantize(t *tables.Tables, opt quantize.Options, cmd tables.Command) (*tables.Tables, []quantize.OrderReport, error) {
	if err := Unquantized(t); err != nil {
		return nil, nil, err
	}
	q, reports, err := quantize.Model(t, opt)
	if err != nil {
		return nil, nil, err
	}
	q.Info.Commands = append(slices.Clip(q.Info.Commands), cmd)
	return q, reports, nil
}
