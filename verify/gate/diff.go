package gate

import (
	"math"

	"github.com/RoaringBitmap/roaring/v2"

	"ingot/format"
)

// unionIDs maps the word ids of two models to ids in the union of their
// vocabularies. Both vocabularies are sorted bytewise, so the maps are
// increasing: n-grams sorted by one model's ids are sorted by union ids too.
func unionIDs(a, b *format.Model) (ua, ub []uint32) {
	wa, wb := vocabulary(a), vocabulary(b)
	ua, ub = make([]uint32, len(wa)), make([]uint32, len(wb))
	i, j, u := 0, 0, uint32(0)
	for i < len(wa) || j < len(wb) {
		switch {
		case j == len(wb) || (i < len(wa) && wa[i] < wb[j]):
			ua[i] = u
			i++
		case i == len(wa) || wb[j] < wa[i]:
			ub[j] = u
			j++
		default:
			ua[i], ub[j] = u, u
			i++
			j++
		}
		u++
	}
	return ua, ub
}

// vocabulary returns a model's words by id.
func vocabulary(m *format.Model) []string {
	words := make([]string, m.VocabSize())
	for id := range words {
		words[id] = m.Word(uint32(id))
	}
	return words
}

// compareMapped orders two n-grams by their union ids.
func compareMapped(a []uint32, ua []uint32, b []uint32, ub []uint32) int {
	for i := 0; i < len(a) && i < len(b); i++ {
		x, y := mapped(ua, a[i]), mapped(ub, b[i])
		if x != y {
			if x < y {
				return -1
			}
			return 1
		}
	}
	return len(a) - len(b)
}

func mapped(u []uint32, id uint32) uint32 {
	if int(id) < len(u) {
		return u[id]
	}
	return math.MaxUint32
}

// differs reports whether two stored log10 values are more than
// ChangeEpsilon apart; equal infinities are the same value.
func differs(a, b float32) bool {
	if a == b {
		return false
	}
	return !(math.Abs(float64(a)-float64(b)) <= ChangeEpsilon)
}

// Diff finds, order by order, the n-grams the candidate added, removed
// and changed with respect to the baseline, matching n-grams by their
// words, and collects each set in a roaring bitmap. It walks the entries of both models side by side, in one pass of
// each. An n-gram of the highest order has no stored back-off weight; it
// counts as weight 1 (log10 0), the weight the back-off rule gives it.
func Diff(candidate, baseline *format.Model) ([]OrderDiff, error) {
	uc, ub := unionIDs(candidate, baseline)
	n := max(candidate.Order(), baseline.Order())
	out := make([]OrderDiff, n)
	for k := 1; k <= n; k++ {
		d := OrderDiff{Order: k, AddedEntries: roaring.New(), RemovedEntries: roaring.New(), ChangedEntries: roaring.New()}
		ic, ib := candidate.Entries(k), baseline.Entries(k)
		okc, okb := ic.Next(), ib.Next()
		for okc || okb {
			var cmp int
			switch {
			case !okb:
				cmp = -1
			case !okc:
				cmp = 1
			default:
				cmp = compareMapped(ic.Gram(), uc, ib.Gram(), ub)
			}
			switch {
			case cmp < 0:
				d.AddedEntries.Add(uint32(ic.Index()))
				okc = ic.Next()
			case cmp > 0:
				d.RemovedEntries.Add(uint32(ib.Index()))
				okb = ib.Next()
			default:
				i, j := ic.Index(), ib.Index()
				if differs(candidate.LogProbAt(k, i), baseline.LogProbAt(k, j)) ||
					differs(candidate.LogBackoffAt(k, i), baseline.LogBackoffAt(k, j)) {
					d.ChangedEntries.Add(uint32(i))
				}
				okc, okb = ic.Next(), ib.Next()
			}
		}
		if err := ic.Err(); err != nil {
			return nil, err
		}
		if err := ib.Err(); err != nil {
			return nil, err
		}
		for _, b := range []*roaring.Bitmap{d.AddedEntries, d.RemovedEntries, d.ChangedEntries} {
			b.RunOptimize()
		}
		d.Added = int(d.AddedEntries.GetCardinality())
		d.Removed = int(d.RemovedEntries.GetCardinality())
		d.Changed = int(d.ChangedEntries.GetCardinality())
		out[k-1] = d
	}
	return out, nil
}
