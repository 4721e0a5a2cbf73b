package quantize

import (
	"cmp"
	"math"
	"slices"
)

// cheapTable is how many of a back-off codebook's levels cheapen gathers
// the weights on: the 2^8 - 1 values of an 8-bit narrow column of a tiered
// column (spec/FORMAT.md §4.8.6), whose all-ones value escapes to the wide
// column.
const cheapTable = 1<<8 - 1

// cheapShift is how far (log10) cheapen moves a weight from its exact
// value: 0.003, a factor of 1.007. Measured on the 8-bit 5-gram
// Kneser-Ney model of nine tenths of the bundled corpus, limits of 0.001,
// 0.003 and 0.01 stored the back-off weights in 9.22, 9.21 and 9.23 bits
// each (9.69 without cheapen) at held-out perplexity costs of +0.0080%,
// +0.0079% and +0.0083% against the float model (+0.0081% without); a
// limit of 0.03 cost +0.020%.
const cheapShift = 0.003

// cheapen moves back-off weights onto frequent levels, so that a tiered
// column stores more of them in its narrow part: the table is the
// cheapTable levels the most contexts use, and each context whose level is
// outside it tries the table's levels within cheapShift of its exact
// weight, nearest first, moving its successors' probabilities from their
// nearest levels (rounded) with the compensator; it takes the first level
// that brings S(h) within MaxResidual/2 of one (half, so that the sum
// recomputed in another order of additions stays within MaxResidual).
// Twice, since the table follows the moves. The choice of each context's
// level and probabilities is written into chosen and probs; pow[j] is
// 10^cb.Values[j].
//
// This is entropy-constrained quantization in its simplest form (Chou,
// Lookabaugh and Gray, "Entropy-constrained vector quantization", IEEE
// Trans. ASSP 37(1), 1989): among the levels whose distortion is
// acceptable, the one that costs the fewest stored bits; here acceptable
// means the context keeps normalising, and the weight stays within a
// factor of 1.007 of its exact value.
func cheapen(probs, rounded []float32, cb Codebook, pow []float64, comp *compensator, start []int, exact, mass []float64, chosen []int) {
	if cb.Len() <= cheapTable+1 {
		return // the codebook fits an 8-bit column: every level is as cheap
	}
	var trial []float32
	freq := make([]int, cb.Len())
	byFreq := make([]int, cb.Len())
	in := make([]bool, cb.Len())
	for range 2 {
		clear(freq)
		for _, j := range chosen {
			if j >= 0 {
				freq[j]++
			}
		}
		for j := range byFreq {
			byFreq[j] = j
		}
		slices.SortStableFunc(byFreq, func(a, b int) int { return freq[b] - freq[a] })
		table := slices.Clone(byFreq[:cheapTable])
		slices.Sort(table) // levels ascend, so their values do
		clear(in)
		for _, j := range table {
			in[j] = true
		}
		for i, j := range chosen {
			if j < 0 || in[j] {
				continue
			}
			a, b := start[i], start[i+1]
			trial = append(trial[:0], rounded[a:b]...)
			sum0 := comp.start(rounded[a:b])
			value := func(t int) float64 { return float64(cb.Values[table[t]]) }
			hi, _ := slices.BinarySearchFunc(table, exact[i], func(l int, v float64) int {
				return cmp.Compare(float64(cb.Values[l]), v)
			})
			lo := hi - 1
			for lo >= 0 || hi < len(table) {
				var t int
				if hi >= len(table) || (lo >= 0 && exact[i]-value(lo) <= value(hi)-exact[i]) {
					t, lo = lo, lo-1
				} else {
					t, hi = hi, hi+1
				}
				if math.Abs(value(t)-exact[i]) > cheapShift {
					break // the rest are further still
				}
				target := 1 - pow[table[t]]*mass[i]
				if r := comp.move(trial, sum0, target); r <= MaxResidual/2 {
					chosen[i] = table[t]
					copy(probs[a:b], trial)
					break
				}
			}
		}
	}
}
