//go:build ingotreads

package format

import (
	"sort"
	"unsafe"
)

// A ReadCount counts the cache lines of one model's bytes that queries
// read, query by query: how many distinct 64-byte lines each query reads,
// and how many of those are cold, not read within the last capacity bytes'
// worth of line reads (a model of a cache of that size, least recently used
// line evicted first, approximated by counting reads rather than distinct
// lines). The hooks are in the readers of the query path (noteRead); only a
// build with the tag ingotreads has them:
//
//	go test -tags ingotreads ./format -run '^$' -bench ReadsPerWord -benchtime 1x
//
// One ReadCount records at a time, from one goroutine.
type ReadCount struct {
	base, end uintptr
	sections  []Section           // by offset
	current   map[uintptr]uintptr // line -> the first address read in it
	lastRead  map[uintptr]int
	clock     int
	capacity  int // in lines
	queries   int
	lines     map[string]int // by section name
	cold      map[string]int
}

var recording *ReadCount

// CountReads starts counting the reads of m's bytes, with a cache model of
// capacityBytes.
func CountReads(m *Model, capacityBytes int) *ReadCount {
	r := &ReadCount{
		base:     uintptr(unsafe.Pointer(unsafe.SliceData(m.data))),
		sections: m.Sections(),
		current:  map[uintptr]uintptr{},
		lastRead: map[uintptr]int{},
		capacity: max(capacityBytes/64, 1),
		lines:    map[string]int{},
		cold:     map[string]int{},
	}
	r.end = r.base + uintptr(len(m.data))
	sort.Slice(r.sections, func(i, j int) bool { return r.sections[i].Offset < r.sections[j].Offset })
	recording = r
	return r
}

func noteRead(b []byte, at uint64) {
	r := recording
	if r == nil || at >= uint64(len(b)) {
		return
	}
	p := uintptr(unsafe.Pointer(unsafe.SliceData(b))) + uintptr(at)
	if p < r.base || p >= r.end {
		return
	}
	if _, ok := r.current[p&^63]; !ok {
		r.current[p&^63] = p
	}
}

// EndQuery closes a query: the lines read since the last EndQuery count for it.
func (r *ReadCount) EndQuery() {
	r.queries++
	for line, first := range r.current {
		name := r.section(first)
		r.lines[name]++
		if last, ok := r.lastRead[line]; !ok || r.clock-last > r.capacity {
			r.cold[name]++
		}
		r.clock++
		r.lastRead[line] = r.clock
	}
	clear(r.current)
}

// Stop stops recording.
func (r *ReadCount) Stop() {
	if recording == r {
		recording = nil
	}
}

// section names the section holding the address (for a line, the first
// address read in it: a line two sections share counts for the section
// read first).
func (r *ReadCount) section(p uintptr) string {
	off := int64(p - r.base)
	i := sort.Search(len(r.sections), func(i int) bool { return r.sections[i].Offset > off }) - 1
	if i >= 0 && off < r.sections[i].Offset+r.sections[i].Length {
		return r.sections[i].Name()
	}
	return "other"
}

// PerQuery returns the distinct lines and the cold lines read per query,
// in all and by section name.
func (r *ReadCount) PerQuery() (lines, cold float64, bySection map[string][2]float64) {
	q := float64(max(r.queries, 1))
	bySection = map[string][2]float64{}
	for name, n := range r.lines {
		lines += float64(n) / q
		cold += float64(r.cold[name]) / q
		bySection[name] = [2]float64{float64(n) / q, float64(r.cold[name]) / q}
	}
	return lines, cold, bySection
}

func noteReadRange(b []byte, from, to uint64) {
	for at := from; at < to; at += 64 {
		noteRead(b, at)
	}
	if from < to {
		noteRead(b, to-1) // the last line, when b's lines are not 64-aligned
	}
}
