package inspect

import (
	"math"

	"ingot/format"
)

// Stats measures where a model's bytes go and what its values look like.
type Stats struct {
	FileBytes int64 `json:"file_bytes"`
	// NGrams holds the entries per order, unigrams first; TotalNGrams
	// their sum.
	NGrams      []int `json:"ngrams"`
	TotalNGrams int   `json:"total_ngrams"`
	// BitsPerNGram is FileBytes * 8 / TotalNGrams: the whole file, header
	// and vocabulary included.
	BitsPerNGram Number `json:"bits_per_ngram"`
	// SharedBytes is what belongs to no order: header, directory, summary,
	// build information, vocabulary, signature and padding.
	SharedBytes int64 `json:"shared_bytes"`
	// Sections lists every section's size, in file order.
	Sections []SectionSize `json:"sections"`
	Orders   []OrderStats  `json:"orders"`
}

// SectionSize is the size of one section.
type SectionSize struct {
	Name  string `json:"name"`
	Order int    `json:"order"`
	Bytes int64  `json:"bytes"`
	// Percent is the section's share of the file.
	Percent Number `json:"percent"`
}

// OrderStats describes the entries of one order.
type OrderStats struct {
	Order  int `json:"order"`
	NGrams int `json:"ngrams"`
	// Bytes is the total length of the order's sections (last words,
	// probabilities, back-offs, child starts, codebooks); BitsPerNGram is
	// Bytes * 8 / NGrams.
	Bytes        int64  `json:"bytes"`
	BitsPerNGram Number `json:"bits_per_ngram"`
	// Contexts counts the entries that have children (stored extensions at
	// the next order); 0 at the highest order.
	Contexts int `json:"contexts"`
	// ProbCodebook and BackoffCodebook describe the order's codebooks; nil
	// when the column is stored as plain float32.
	ProbCodebook    *CodebookStats `json:"prob_codebook"`
	BackoffCodebook *CodebookStats `json:"backoff_codebook"`
	// BackoffWeights summarises the back-off weights; nil at the highest
	// order, which stores none.
	BackoffWeights *WeightStats `json:"backoff_weights"`
}

// CodebookStats describes one codebook: its levels (log10 values).
type CodebookStats struct {
	Levels int `json:"levels"`
	// IndexBits is the width of a codebook index: ceil(log2 Levels).
	IndexBits int `json:"index_bits"`
	// StoredBits is what the file spends per stored entry of the column,
	// codebook excluded: IndexBits plus a header's share when the indexes
	// are packed, less when they are tiered (frequent levels in narrow
	// values, spec/FORMAT.md 4.8.6).
	StoredBits Number `json:"stored_bits"`
	Min        Number `json:"min"`
	Max        Number `json:"max"`
	// Step is the largest gap between neighbouring levels: no value was
	// moved by more than half of it when it was rounded to its nearest level.
	Step Number `json:"step"`
}

// WeightStats summarises the log10 back-off weights of the contexts of one
// order (entries with children). The weight of an entry without children is
// never used and is stored as 1 (log10 0).
type WeightStats struct {
	// Count is the number of contexts whose weight is summarised.
	Count int    `json:"count"`
	Min   Number `json:"min"`
	Max   Number `json:"max"`
	Mean  Number `json:"mean"`
	// NonContextsNotOne counts entries without children whose stored weight
	// is not 1; a model written by ingot has none.
	NonContextsNotOne int `json:"non_contexts_not_one"`
}

// Statistics measures the model. It reads every child start and back-off
// weight once: time linear in the number of n-grams below the highest
// order, memory constant.
func Statistics(m *format.Model) Stats {
	st := Stats{FileBytes: m.Size()}
	perOrder := make([]int64, m.Order()+1)
	for _, s := range m.Sections() {
		st.Sections = append(st.Sections, SectionSize{
			Name:    s.Name(),
			Order:   s.Order,
			Bytes:   s.Length,
			Percent: Number(100 * float64(s.Length) / float64(st.FileBytes)),
		})
		if s.Order >= 1 && s.Order <= m.Order() {
			perOrder[s.Order] += s.Length
		}
	}
	st.SharedBytes = st.FileBytes
	for k := 1; k <= m.Order(); k++ {
		n := m.Count(k)
		st.NGrams = append(st.NGrams, n)
		st.TotalNGrams += n
		st.SharedBytes -= perOrder[k]
		o := OrderStats{
			Order:           k,
			NGrams:          n,
			Bytes:           perOrder[k],
			BitsPerNGram:    Number(float64(perOrder[k]) * 8 / float64(n)),
			ProbCodebook:    codebookStats(m, k, false),
			BackoffCodebook: codebookStats(m, k, true),
		}
		if k < m.Order() {
			o.Contexts, o.BackoffWeights = backoffStats(m, k)
		}
		st.Orders = append(st.Orders, o)
	}
	st.BitsPerNGram = Number(float64(st.FileBytes) * 8 / float64(st.TotalNGrams))
	return st
}

// codebookStats summarises the codebook of order k's probabilities
// (backoff false) or back-off weights and how the file stores its indexes;
// nil when the column holds plain values.
func codebookStats(m *format.Model, k int, backoff bool) *CodebookStats {
	levels := m.Codebook(k, backoff)
	if len(levels) == 0 {
		return nil
	}
	c := &CodebookStats{
		Levels:     len(levels),
		IndexBits:  m.IndexBits(k, backoff),
		StoredBits: Number(m.StoredBits(k, backoff)),
		Min:        Number(levels[0]),
		Max:        Number(levels[len(levels)-1]),
	}
	step := 0.0
	for i := 1; i < len(levels); i++ {
		step = max(step, float64(levels[i])-float64(levels[i-1]))
	}
	c.Step = Number(step)
	return c
}

// backoffStats counts the contexts of order k and summarises their weights.
func backoffStats(m *format.Model, k int) (contexts int, w *WeightStats) {
	w = &WeightStats{Min: Number(math.Inf(1)), Max: Number(math.Inf(-1))}
	sum := 0.0
	for i := range m.Count(k) {
		b := float64(m.LogBackoffAt(k, i))
		if start, end := m.ChildRange(k, i); start == end {
			if b != 0 {
				w.NonContextsNotOne++
			}
			continue
		}
		contexts++
		w.Count++
		sum += b
		w.Min = min(w.Min, Number(b))
		w.Max = max(w.Max, Number(b))
	}
	if w.Count == 0 {
		w.Min, w.Max = Number(math.NaN()), Number(math.NaN())
	}
	w.Mean = Number(sum / float64(w.Count))
	return contexts, w
}
