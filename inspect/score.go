package inspect

import "ingot/format/score"

// ScoredSentence is one line of ingot score --json: a sentence's tokens,
// the log10 probability and matched order of each prediction, and its
// perplexities.
type ScoredSentence struct {
	File   string   `json:"file"`
	Line   int      `json:"line"`
	Tokens []string `json:"tokens"`
	Log10  []Number `json:"log10"`
	// MatchedOrder is, per token, the order of the stored n-gram whose
	// probability was used: 1 for a unigram, 0 for a word outside the
	// vocabulary.
	MatchedOrder         []int  `json:"matched_order"`
	SumLog10             Number `json:"sum_log10"`
	UnkPredictions       int    `json:"unk_predictions"`
	Perplexity           Number `json:"sentence_perplexity"`
	PerplexityWithoutUnk Number `json:"sentence_perplexity_without_unk"`
}

// NewScoredSentence describes the sentence s of the named text file.
func NewScoredSentence(file string, s *score.Sentence) ScoredSentence {
	lp := make([]Number, len(s.Log10))
	for i, x := range s.Log10 {
		lp[i] = Number(x)
	}
	return ScoredSentence{
		File: file, Line: s.Line, Tokens: s.Tokens, Log10: lp, MatchedOrder: s.MatchedOrder,
		SumLog10: Number(s.Sum), UnkPredictions: s.Unk,
		Perplexity: Number(s.Perplexity()), PerplexityWithoutUnk: Number(s.PerplexityWithoutUnknown()),
	}
}

// ScoreSummary is the last line of ingot score --json (the only one with
// --summary-only): the totals over every sentence scored with model.
type ScoreSummary struct {
	Summary              bool   `json:"summary"` // always true: tells the line from a sentence's
	Model                string `json:"model"`
	Sentences            int    `json:"sentences"`
	Predictions          int    `json:"predictions"`
	UnkPredictions       int    `json:"unk_predictions"`
	SumLog10             Number `json:"sum_log10"`
	Perplexity           Number `json:"perplexity"`
	PerplexityWithoutUnk Number `json:"perplexity_without_unk"`
}

// NewScoreSummary describes the totals s of scoring with model.
func NewScoreSummary(model string, s *score.Summary) ScoreSummary {
	return ScoreSummary{true, model, s.Sentences, s.Predictions, s.Unk, Number(s.Sum),
		Number(s.Perplexity()), Number(s.PerplexityWithoutUnknown())}
}
