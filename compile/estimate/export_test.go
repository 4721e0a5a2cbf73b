package estimate

import "ingot/compile/counts"

// Float64Values estimates like Estimate and returns, before float32
// storage, the full probability of each stored n-gram given its context
// (prob[k-1][i]) and the back-off weight of each entry of orders below the
// highest as a context (bow[k-1][i]).
func Float64Values(c *counts.Counts, opt Options) (prob, bow [][]float64, err error) {
	if err := opt.Validate(); err != nil {
		return nil, nil, err
	}
	e, err := run(c, opt)
	if err != nil {
		return nil, nil, err
	}
	return e.prob, e.bow, nil
}
