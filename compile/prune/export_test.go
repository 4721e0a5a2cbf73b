package prune

import "ingot/compile/tables"

// RenormalizeFloat64 is Renormalize, also returning every back-off weight
// before float32 storage: bow[k-1][i] for entry i of order k < N.
func RenormalizeFloat64(t *tables.Tables) (bow [][]float64) {
	bow = make([][]float64, t.Order()-1)
	for k := range bow {
		bow[k] = make([]float64, t.Len(k+1))
	}
	renormalize(t, func(k, i int, b float64) { bow[k-1][i] = b })
	return bow
}
