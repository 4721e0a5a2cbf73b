package pipeline

import (
	"context"
	"errors"
	"fmt"

	"ingot/compile/bounded"
	"ingot/compile/estimate"
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
	in, err := openHashedInputs(names)
	if err != nil {
		return nil, err
	}
	defer in.close()
	opt := o.Estimate
	o.progress(fmt.Sprintf("estimating %s, order %d, in sorted passes", opt.Method, opt.Order))
	m, err := bounded.Estimate(ctx, in.sources, opt, b)
	var oe *estimate.OptionError
	if errors.As(err, &oe) {
		return nil, fmt.Errorf("--%s %v: %w", oe.Option, oe.Value, oe.Err)
	}
	if err != nil {
		return nil, err
	}
	ins, err := in.digests()
	if err != nil {
		m.Close()
		return nil, err
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
