// Command ingot-beam counts n-grams with an Apache Beam pipeline and writes
// ingot count-file shards that 'ingot compile' reads directly. It runs on
// any Beam runner: the in-process Prism runner by default, or --runner
// flink, spark, universal (a job server endpoint) or dataflow with that
// runner's own flags.
//
//	ingot-beam --order 5 --input 'corpus/*.txt.gz' --output counts/sotu
//	ingot compile --order 5 -o model.ingot counts/sotu-*.counts
package main

import (
	"context"
	"flag"
	"fmt"
	"os"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/x/beamx"

	"ingot/cmd/ingot-beam/beamcount"
	"ingot/compile/vocab"
)

func main() {
	var o beamcount.Options
	var wordList string
	flag.IntVar(&o.Order, "order", 0, "highest n-gram order to count (required)")
	flag.StringVar(&o.Input, "input", "", "text files to count: a glob on any Beam file system (.gz and .zst are decompressed) (required)")
	flag.StringVar(&o.Output, "output", "", "shard prefix: writes PREFIX-SSSSS-of-NNNNN"+beamcount.Extension+" (required)")
	flag.IntVar(&o.Shards, "shards", 4, "number of count files to write")
	flag.Int64Var(&o.MinWordCount, "min-word-count", 1, "replace words seen fewer times than this by <unk>")
	flag.StringVar(&wordList, "vocabulary", "", "fixed word list, one word per line: count every other word as <unk>")
	flag.Parse()
	beam.Init()

	if wordList != "" {
		l, err := vocab.Load(wordList)
		if err != nil {
			fail(2, "--vocabulary: %v", err)
		}
		o.Vocabulary = append([]string{}, l.Words()...)
	}
	if err := o.Check(); err != nil {
		fail(2, "%v", err)
	}
	p, s := beam.NewPipelineWithRoot()
	beamcount.Build(s, o)
	if err := beamx.Run(context.Background(), p); err != nil {
		fail(1, "%v", err)
	}
}

func fail(code int, format string, a ...any) {
	fmt.Fprintf(os.Stderr, "ingot-beam: "+format+"\n", a...)
	os.Exit(code)
}
