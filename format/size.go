package format

import (
	"ingot/compile/tables"
)

// Planned says how FileSize should count a model's columns when they are
// to be quantized later: codebooks of UnigramLevels levels for the
// probabilities of order 1, of ProbLevels levels for the
// probabilities of orders 2 and up and of BackoffLevels for the back-off
// weights of the orders below the top (0 for either: the column as the
// tables hold it), and the build information the written file will carry
// (nil: the tables' own). Counted so, an unquantized back-off weight is
// stored only where the entry has children, as a quantized model whose
// codebooks are not yet known is shaped.
type Planned struct {
	UnigramLevels, ProbLevels, BackoffLevels int
	Info                                     *tables.Info
}

// FileSize returns the number of bytes Write produces for t, computed from
// the tables' shape without encoding a section: header and directory, each
// section's length and the padding before it. With a zero Planned it is
// exactly the written size; it refuses what Write refuses.
func FileSize(t *tables.Tables, plan Planned) (int64, error) {
	if err := checkWritable(t); err != nil {
		return 0, err
	}
	info := t.Info
	if plan.Info != nil {
		info = *plan.Info
	}
	infoBytes, err := marshalInfo(info)
	if err != nil {
		return 0, err
	}
	n := t.Order()
	lengths := append([]int64{
		int64(summaryFixedSize + 8*n),
		int64(len(infoBytes)),
	}, vocabularyLengths3(t.Vocab)...)
	// A column to be quantized is counted packed, which a tiered column
	// never exceeds (the writer chooses it only when it is shorter); a
	// quantized one exactly as the writer encodes it.
	column := func(values []float32, entries int, codebook []float32, planned int) {
		switch {
		case planned != 0:
			lengths = append(lengths, 4*int64(planned), packedLen(entries, bitsFor(planned)))
		case codebook == nil:
			lengths = append(lengths, 4*int64(entries))
		default:
			lengths = append(lengths, 4*int64(len(codebook)), columnLength(values, codebook, true))
		}
	}
	links := linksOf(t)
	childStarts := links.Starts
	for k := 1; k <= n; k++ {
		lv := &t.Levels[k-1]
		nk := t.Len(k)
		if k >= 2 {
			keys, _ := wordKeys(t, k, childStarts, links)
			below := &t.Levels[k-2]
			starts := childStarts[k-2]
			length := planKeys(keys, starts, func(i int) bool {
				return starts[i+1] > starts[i] || (plan.BackoffLevels == 0 && hasBackoff(below.LogBackoff[i]))
			}).length
			lengths = append(lengths, length)
		}
		probLevels := plan.ProbLevels
		if k == 1 {
			probLevels = plan.UnigramLevels
		}
		column(lv.LogProb, nk, lv.ProbCodebook, probLevels)
		if k < n {
			starts := childStarts[k-1]
			words, counters := marksSizes(uint64(nk))
			lengths = append(lengths, marksHeader+8*int64(words)+4*int64(counters))
			contexts := 0
			var kept []float32
			for i, b := range lv.LogBackoff {
				if starts[i+1] > starts[i] || (plan.BackoffLevels == 0 && hasBackoff(b)) {
					contexts++
					if lv.BackoffCodebook != nil && plan.BackoffLevels == 0 {
						kept = append(kept, b)
					}
				}
			}
			column(kept, contexts, lv.BackoffCodebook, plan.BackoffLevels)
			lengths = append(lengths, efLength(uint64(contexts)+1, uint64(starts[len(starts)-1])))
		}
	}
	pos := int64(headerSize + directoryEntry*len(lengths))
	for _, l := range lengths {
		pos = align(pos) + l
	}
	return align(pos), nil
}

// efLength is the length of an Elias-Fano section of n values whose largest
// is last (encodeEliasFano).
func efLength(n, last uint64) int64 {
	low, high, samples := efSizes(n, last, efLowBits(n, last))
	return efHeader + 8*int64(low+high+samples)
}
