//go:build ingotreads

package format_test

import (
	"bytes"
	"fmt"
	"os"
	"sort"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/format"
)

// BenchmarkReadsPerWord counts the cache lines Model.Next reads per word of
// held-out text, by section, for the 8-bit 5-gram model of
// BenchmarkScoringGenerated in versions 3 and 2 (and, with
// INGOT_BENCH_LARGE set, of BenchmarkScoringGeneratedLarge), and how many
// of them a 2 MiB cache would miss (see format.ReadCount). It needs the
// build tag that compiles the read hooks in:
//
//	INGOT_BENCH_CACHE=/tmp/ingot-bench go test -tags ingotreads ./format -run '^$' -bench ReadsPerWord -benchtime 1x
func BenchmarkReadsPerWord(b *testing.B) {
	sentences, name := 230000, "generated-5gram-8bit"
	if os.Getenv("INGOT_BENCH_LARGE") != "" {
		sentences, name = 750000, "generated-large-5gram-8bit"
	}
	var text bytes.Buffer
	if err := corpus.Generate(&text, 1, sentences, 50000); err != nil {
		b.Fatal(err)
	}
	train, held := corpus.Split(strings.Split(strings.TrimSpace(text.String()), "\n"), 0)
	text = bytes.Buffer{}
	m3, m2 := cachedModels(b, name, train)
	ids := heldIDs(m3, held)
	for _, c := range []struct {
		v string
		m *format.Model
	}{{"v3", m3}, {"v2", m2}} {
		r := format.CountReads(c.m, 2<<20)
		s := c.m.StartState()
		sum := 0.0
		for _, w := range ids {
			sum += c.m.Next(&s, w)
			r.EndQuery()
			if w == c.m.EndID() {
				s = c.m.StartState()
			}
		}
		r.Stop()
		lines, cold, by := r.PerQuery()
		b.ReportMetric(lines, c.v+"-lines/word")
		b.ReportMetric(cold, c.v+"-cold-lines/word")
		names := make([]string, 0, len(by))
		for n := range by {
			names = append(names, n)
		}
		sort.Strings(names)
		var out strings.Builder
		fmt.Fprintf(&out, "version %s (%.1f MiB), per word of %d: %.2f lines read, %.2f cold (log10 sum %.1f)\n", c.v[1:], float64(c.m.Size())/(1<<20), len(ids), lines, cold, sum)
		for _, n := range names {
			fmt.Fprintf(&out, "  %-36s %6.2f lines %6.2f cold\n", n, by[n][0], by[n][1])
		}
		fmt.Print(out.String())
	}
}
