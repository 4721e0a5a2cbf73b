package inspect

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"ingot/format/score"
)

// A scored sentence keeps its tokens, log10 values and matched orders
// aligned, and writes a log10 of probability zero (and the perplexity it
// makes infinite) as null; the summary line says it is the summary.
func TestScoreReports(t *testing.T) {
	s := &score.Sentence{Line: 4, Tokens: []string{"a", "<unk>", "</s>"}, Log10: []float64{-1, math.Inf(-1), -0.5},
		MatchedOrder: []int{1, 0, 2}, Sum: math.Inf(-1), Unk: 1, UnkSum: math.Inf(-1)}
	b, err := json.Marshal(NewScoredSentence("t.txt", s))
	if err != nil {
		t.Fatal(err)
	}
	want := `{"file":"t.txt","line":4,"tokens":["a","<unk>","</s>"],"log10":[-1,null,-0.5],"matched_order":[1,0,2],"sum_log10":null,"unk_predictions":1,"sentence_perplexity":null,"sentence_perplexity_without_unk":`
	got := strings.NewReplacer(`\u003c`, "<", `\u003e`, ">").Replace(string(b))
	if !strings.HasPrefix(got, want) {
		t.Errorf("got  %s\nwant %s...", b, want)
	}
	var sum score.Summary
	sum.Add(&score.Sentence{Log10: []float64{-1, -1}, Sum: -2})
	b, _ = json.Marshal(NewScoreSummary("m.ingot", &sum))
	if got := string(b); got != `{"summary":true,"model":"m.ingot","sentences":1,"predictions":2,"unk_predictions":0,"sum_log10":-2,"perplexity":10,"perplexity_without_unk":10}` {
		t.Errorf("summary %s", got)
	}
}
