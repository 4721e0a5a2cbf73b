//go:build !ingotreads

package format

// noteRead is called by the readers of the query path with the bytes they
// are about to read from (b[at:]). It does nothing: built with the tag
// ingotreads (reads_on.go), it counts the cache lines that queries read, a
// measurement of the layout (BenchmarkReadsPerWord); this build compiles the
// calls away.
func noteRead(b []byte, at uint64) {}

// noteReadRange is noteRead for the bytes b[from:to], all read.
func noteReadRange(b []byte, from, to uint64) {}
