package format

// StoresBackoff reports whether entry i of order k has a back-off weight
// stored: every entry of an order below the top in versions 1 and 2, the
// marked entries (contexts) in version 3. For the size benchmarks.
func StoresBackoff(m *Model, k, i int) bool {
	if k < 1 || k >= m.order {
		return false
	}
	if m.version < 3 {
		return true
	}
	marked, _ := m.levels[k-1].marks.rank(uint64(i))
	return marked
}
