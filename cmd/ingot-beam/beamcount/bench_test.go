package beamcount

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
)

// benchSentences is a slice, not the whole corpus: the Prism runner keeps
// every element of a stage in memory (about 12 GB, still running after 23
// minutes, on the whole corpus at order 5 on this machine).
const benchSentences = 8000

// BenchmarkPipelineAgainstCount counts the first benchSentences sentences of
// the bundled corpus (split in four plain-text files) at order 5 twice in
// one process: with the counter 'ingot count' uses, then with the pipeline
// on the in-process Prism runner (four shards). It reports both throughputs in words of text per second,
// their ratio, and the bytes the pipeline hands to its shuffle per byte of
// input text.
//
//	cd cmd/ingot-beam && go test -run '^$' -bench PipelineAgainstCount -benchtime 1x ./beamcount
func BenchmarkPipelineAgainstCount(b *testing.B) {
	lines := sotu(b, benchSentences)
	dir := b.TempDir()
	quarter := (len(lines) + 3) / 4
	var paths []string
	inputBytes := 0
	words := 0
	for i := 0; i < 4; i++ {
		part := lines[min(i*quarter, len(lines)):min((i+1)*quarter, len(lines))]
		text := strings.Join(part, "\n") + "\n"
		inputBytes += len(text)
		for _, l := range part {
			words += len(strings.Fields(l))
		}
		p := filepath.Join(dir, "part-"+string(rune('a'+i))+".txt")
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			b.Fatal(err)
		}
		paths = append(paths, p)
	}
	for i := 0; i < b.N; i++ {
		start := time.Now()
		oneMachine(b, 5, 1, nil, paths)
		single := time.Since(start)

		p, s := beam.NewPipelineWithRoot()
		Build(s, Options{Order: 5, Input: filepath.Join(dir, "part-*"), Output: filepath.Join(dir, "out", "sotu"), Shards: 4})
		start = time.Now()
		res, err := beam.Run(context.Background(), "prism", p)
		if err != nil {
			b.Fatal(err)
		}
		piped := time.Since(start)
		var shuffled int64
		for _, c := range res.Metrics().AllMetrics().Counters() {
			if c.Key.Name == "shuffled_bytes" {
				shuffled += c.Result()
			}
		}
		b.ReportMetric(float64(words)/single.Seconds(), "count-words/s")
		b.ReportMetric(float64(words)/piped.Seconds(), "pipeline-words/s")
		b.ReportMetric(piped.Seconds()/single.Seconds(), "pipeline/count")
		b.ReportMetric(float64(shuffled)/float64(inputBytes), "shuffle-bytes/input-byte")
	}
}
