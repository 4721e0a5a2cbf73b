package pipeline

import (
	"fmt"
	"slices"

	"ingot/compile/interpolate"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/inspect"
)

// Interpolate says how to merge models into one back-off model by linear
// interpolation (package interpolate; Jelinek & Mercer 1980).
type Interpolate struct {
	// Names are the input model files, in the order of the models (the
	// report lists them; the model records them).
	Names []string
	// Weights are the given weights, one per model; nil: fitted on Fit
	// when it is given, else equal.
	Weights []float64
	// Fit is held-out text to fit the weights on by EM (nil: none).
	Fit [][]string
	// Heldout, named HeldoutName, is the text the report gives the
	// perplexities on (nil: none).
	Heldout     [][]string
	HeldoutName string
	// ToolVersion and BuildTime are recorded in the model.
	ToolVersion, BuildTime string
	// Command is the provenance of this step, recorded in the model.
	Command tables.Command
	// Progress, when set, is told about each step.
	Progress func(step string)
}

// InterpolateReport is interpolate's JSON report. The held-out keys are
// present only with held-out text.
type InterpolateReport struct {
	Model          string    `json:"model"`
	Inputs         []string  `json:"inputs"`
	Weights        []float64 `json:"weights"`
	Fitted         bool      `json:"fitted"`
	Iterations     int       `json:"iterations,omitempty"`
	Order          int       `json:"order"`
	VocabularySize int       `json:"vocabulary_size"`
	NGramsPerOrder []int     `json:"ngrams"`
	// Heldout names the text of the perplexities, Predictions counts its
	// predictions; InputPerplexities are each input's (over the union
	// vocabulary, as the mixture uses it), MixturePerplexity the exact
	// mixture's and Perplexity the written model's.
	Heldout           string           `json:"heldout,omitempty"`
	Predictions       int              `json:"predictions,omitempty"`
	InputPerplexities []inspect.Number `json:"input_perplexities,omitempty"`
	MixturePerplexity *inspect.Number  `json:"mixture_perplexity,omitempty"`
	Perplexity        *inspect.Number  `json:"perplexity,omitempty"`
}

// Interpolated is what Interpolate.Run built.
type Interpolated struct {
	Model  *tables.Tables
	Report InterpolateReport
	// heldout is the text the written model is scored on (ScoreWritten).
	heldout [][]string
}

// Run interpolates models (read whole, quantized or not) into one model
// that will be written to out: the weights as given, fitted by EM on Fit,
// or equal; and, with held-out text, the perplexity of each input and of
// the exact mixture.
func (o Interpolate) Run(models []*tables.Tables, out string) (*Interpolated, error) {
	mix, err := interpolate.New(models)
	if err != nil {
		return nil, err
	}
	rep := InterpolateReport{Model: out, Inputs: o.Names, Order: mix.Order(), VocabularySize: len(mix.Vocab())}
	w := o.Weights
	switch {
	case w != nil && o.Fit != nil:
		return nil, fmt.Errorf("give the weights or held-out text to fit them on, not both")
	case w != nil:
		if err := mix.CheckWeights(w); err != nil {
			return nil, fmt.Errorf("--weights: %w", err)
		}
	case o.Fit != nil:
		o.progress("fitting the weights")
		if w, rep.Iterations, err = mix.Score(o.Fit).Fit(); err != nil {
			return nil, fmt.Errorf("--fit: %w", err)
		}
		rep.Fitted = true
	default:
		w = make([]float64, len(models))
		for i := range w {
			w[i] = 1 / float64(len(models))
		}
	}
	rep.Weights = w
	o.progress("building the interpolated model")
	t, err := mix.Build(w, o.Names)
	if err != nil {
		return nil, err
	}
	t.Info.ToolVersion, t.Info.BuildTime = o.ToolVersion, o.BuildTime
	t.Info.Commands = append(slices.Clip(t.Info.Commands), o.Command)
	rep.NGramsPerOrder = NGramsPerOrder(t)
	if o.Heldout != nil {
		o.progress("scoring the held-out text")
		h := mix.Score(o.Heldout)
		rep.Heldout, rep.Predictions = o.HeldoutName, h.Predictions()
		for i := range models {
			rep.InputPerplexities = append(rep.InputPerplexities, inspect.Number(h.Perplexity(interpolate.Unit(len(models), i))))
		}
		p := inspect.Number(h.Perplexity(w))
		rep.MixturePerplexity = &p
	}
	return &Interpolated{Model: t, Report: rep, heldout: o.Heldout}, nil
}

// ScoreWritten adds to the report the perplexity of the written model file
// at path on the held-out text, scored as ingot score scores it (nothing
// without held-out text).
func (r *Interpolated) ScoreWritten(path string) error {
	if r.heldout == nil {
		return nil
	}
	m, err := format.Open(path)
	if err != nil {
		return err
	}
	defer m.Close()
	p := inspect.Number(Perplexity(m, r.heldout))
	r.Report.Perplexity = &p
	return nil
}

func (o Interpolate) progress(s string) {
	if o.Progress != nil {
		o.Progress(s)
	}
}
