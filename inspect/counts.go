package inspect

import (
	"fmt"

	"ingot/compile/counts"
)

// CountFile is what inspect shows of a binary count file, read from its
// header and end record (not its blocks: counts.Dump and compile check
// those). Its JSON keys are those of ingot count's report, plus the layout.
type CountFile struct {
	Counts         string `json:"counts"`
	FileBytes      int64  `json:"file_bytes"`
	LayoutVersion  int    `json:"layout_version"`
	Order          int    `json:"order"`
	VocabularySize int    `json:"vocabulary_size"`
	Blocks         uint64 `json:"blocks"`
	// NGramsPerOrder are the entries stored per order, CountSumPerOrder
	// the sum of their counts; unigrams first.
	NGramsPerOrder   []uint64 `json:"ngrams"`
	CountSumPerOrder []uint64 `json:"count_sum_per_order"`
}

// DescribeCounts reads the header and end record of the binary count file
// at path.
func DescribeCounts(path string) (*CountFile, error) {
	info, err := counts.Describe(path)
	if err != nil {
		return nil, err
	}
	return &CountFile{
		Counts: path, FileBytes: info.Size, LayoutVersion: info.LayoutVersion, Order: info.Order,
		VocabularySize: info.Words, Blocks: info.Totals.Blocks,
		NGramsPerOrder:   append([]uint64{}, info.Totals.Entries...),
		CountSumPerOrder: append([]uint64{}, info.Totals.Sums...),
	}, nil
}

// CheckOrder refuses an order the count file does not hold.
func (c *CountFile) CheckOrder(k int) error {
	if k < 1 || k > c.Order {
		return fmt.Errorf("order %d outside the count file's orders 1..%d", k, c.Order)
	}
	return nil
}
