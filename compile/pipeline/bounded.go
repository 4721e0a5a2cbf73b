package pipeline

import (
	"context"
	"errors"
	"fmt"

	"ingot/compile/bounded"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/input"
	"ingot/compile/tables"
)

// Bounded is a model estimated on disk within a memory budget (package
// bounded), ready to be written; Close removes its files.
type Bounded struct {
	*bounded.Model
	// Info is the model's build information, completed as Run completes
	// an in-memory model's.
	Info tables.Info
	// Estimate is the estimate's options as used (the order the counts
	// allow).
	Estimate estimate.Options
}

// InMemoryOnly reports whether the build needs the counts in memory
// (count cutoffs, a fixed vocabulary, a size budget).
func (o Compile) InMemoryOnly() bool {
	return o.MinCount != "" || o.Vocabulary != nil || o.MaxSize != ""
}

// RunBounded builds the model from the named count files in sorted passes
// on disk, within b.Memory (see bounded.Estimate): the model Run would
// build, byte for byte. The provenance records the files read (o.Command's
// line and budget, with their digests).
func (o Compile) RunBounded(ctx context.Context, names []string, b bounded.Options) (*Bounded, error) {
	if o.InMemoryOnly() {
		return nil, errors.New("--min-count, --vocabulary and --max-size need the counts in memory")
	}
	var sources []counts.Source
	var hashed []*input.Hashed
	defer func() {
		for _, h := range hashed {
			h.Close()
		}
	}()
	for _, name := range names {
		h, err := input.OpenRegularHashed(name)
		if err != nil {
			return nil, err
		}
		hashed = append(hashed, h)
		sources = append(sources, counts.Source{Name: inputName(name), R: h})
	}
	opt := o.Estimate
	o.progress(fmt.Sprintf("estimating %s, order %d, in sorted passes", opt.Method, opt.Order))
	m, err := bounded.Estimate(ctx, sources, opt, b)
	var oe *estimate.OptionError
	if errors.As(err, &oe) {
		return nil, fmt.Errorf("--%s %v: %w", oe.Option, oe.Value, oe.Err)
	}
	if err != nil {
		return nil, err
	}
	ins := make([]tables.Input, len(names))
	for i, h := range hashed {
		n, sum, err := h.Digest()
		if err != nil {
			m.Close()
			return nil, fmt.Errorf("%s: %w", inputName(names[i]), err)
		}
		ins[i] = tables.Input{Name: inputName(names[i]), Bytes: n, SHA256: sum}
	}
	o.Command.Inputs = ins
	info := m.Result.Info
	if m.Order < opt.Order {
		note := fmt.Sprintf("the counts hold no n-gram above order %d (the text has no longer one): built a model of order %d, the most they allow", m.Order, m.Order)
		o.warn(note)
		info.History = append(info.History, note)
		opt.Order = m.Order
	}
	o.describe(&info, opt)
	return &Bounded{Model: m, Info: info, Estimate: opt}, nil
}
