package gate

import (
	"math"

	"ingot/format"
)

// Divergence measures the Kullback-Leibler divergence KL(p || q) =
// sum_e p(e) ln(p(e)/q(e)), in nats, between the next-word distributions
// of two models p and q at every prediction of running text (Kullback and
// Leibler (1951), "On information and sufficiency", Ann. Math. Statist.
// 22(1); the form of Cover and Thomas, "Elements of Information Theory",
// eq. 2.26; both references recalled from memory). Compare takes p to be the baseline and q the candidate: the
// information lost when the candidate stands in for the baseline.
//
// The two vocabularies may differ, and each model gives every word it does
// not know to <unk>. So both distributions are taken over the same events:
// each word the two vocabularies share (other than <unk>; <s> is never
// predicted), and one event "any other word", which gathers a model's
// <unk> and the words only it knows. On these events each model's
// distribution is a proper one; each is divided by its total (one for a
// normalised model) so that the divergence is that of two probability
// distributions even for a model that fails normalisation. Identical
// models give exactly 0. Merging words into one event can only lower the
// divergence (the log-sum inequality, Cover and Thomas ch. 2), so the number is a lower bound of
// what a finer comparison would find.
//
// Each prediction costs time linear in the stored n-grams it touches, not
// in the vocabularies, so the gate stays fast for a keyboard's 100,000-word
// lexicon. A word that neither model stores after any suffix of the
// context gets, in each model, the product W of the back-off weights of
// the stored suffixes times its unigram probability u. The sum of
// p ln(p/q) over all such words is therefore
//
//	(Wp/Zp) * ( sum u_p ln(u_p/u_q) + ln((Wp/Zp)/(Wq/Zq)) * sum u_p )
//
// with Z each model's total; the two sums over those words are the sums
// over every shared word (computed once) less the sums over the words
// stored after the context, which are visited anyway. The totals and the
// "any other word" event are found the same way: whole-vocabulary sums of
// unigram probabilities computed once, corrected for the stored words. This
// is how verify's normalisation sums a context's back-off mass.
type Divergence struct {
	p, q   distribution
	events int
	shared int32 // events below shared are one shared word each
	// Whole-vocabulary sums over the shared words, computed once:
	// sum u_p ln(u_p/u_q), sum u_p, and the number of shared words that
	// p gives mass and q none (each makes the divergence infinite).
	allLog, allP float64
	allZeroQ     int
	// touched lists the shared events stored after the current context
	// in either model; mark[e] == gen flags them.
	touched []int32
	mark    []uint32
	gen     uint32
}

// distribution holds one model's side of the comparison.
type distribution struct {
	m       *format.Model
	event   []int32   // word id -> event; -1 for <s>
	word    []uint32  // shared event -> this model's word id
	unigram []float64 // P(w) of each word, 0 for <s>
	// Sums of unigram probabilities over every predictable word and over
	// the words of the "any other word" event.
	allUnigram, otherUnigram float64
	next                     *format.Successors // the distribution at this prediction, by the model's back-off rule
	value                    []float64          // value[w]: P(w | context) of each word next lists
	stored                   []uint32           // next's words
	weight                   float64            // W: every other word's P(w | context) is W times its unigram probability
	state                    format.State       // the sentence so far
}

// NewDivergence prepares to compare the models p and q.
func NewDivergence(p, q *format.Model) *Divergence {
	wp, wq := vocabulary(p), vocabulary(q)
	d := &Divergence{
		p: distribution{m: p, event: make([]int32, len(wp))},
		q: distribution{m: q, event: make([]int32, len(wq))},
	}
	// Shared words first, in byte order; then the one other event.
	const unassigned = -2
	for _, s := range []*distribution{&d.p, &d.q} {
		for id := range s.event {
			s.event[id] = unassigned
		}
	}
	shared := int32(0)
	for i, j := 0, 0; i < len(wp) && j < len(wq); {
		switch {
		case wp[i] < wq[j]:
			i++
		case wq[j] < wp[i]:
			j++
		default:
			if uint32(i) != p.UnknownID() && uint32(i) != p.StartID() && uint32(j) != q.UnknownID() && uint32(j) != q.StartID() {
				d.p.event[i], d.q.event[j] = shared, shared
				shared++
			}
			i++
			j++
		}
	}
	d.events = int(shared) + 1
	d.shared = shared
	for _, s := range []*distribution{&d.p, &d.q} {
		for id, ev := range s.event {
			switch {
			case uint32(id) == s.m.StartID():
				s.event[id] = -1
			case ev == unassigned:
				s.event[id] = shared // any other word
			}
		}
		s.unigram = make([]float64, len(s.event))
		for id := range s.unigram {
			if uint32(id) != s.m.StartID() {
				s.unigram[id] = exp10(float64(s.m.LogProbAt(1, id)))
			}
		}
		s.next = s.m.NewSuccessors()
		s.value = make([]float64, len(s.event))
		s.word = make([]uint32, shared)
		for id, ev := range s.event {
			switch {
			case ev < 0:
			case ev < shared:
				s.word[ev] = uint32(id)
				s.allUnigram += s.unigram[id]
			default:
				s.allUnigram += s.unigram[id]
				s.otherUnigram += s.unigram[id]
			}
		}
	}
	for e := range shared {
		up, uq := d.p.unigram[d.p.word[e]], d.q.unigram[d.q.word[e]]
		d.allLog += plogq(up, uq)
		d.allP += up
		if up > 0 && uq == 0 {
			d.allZeroQ++
		}
	}
	d.mark = make([]uint32, shared)
	return d
}

// plogq is p ln(p/q), 0 when p is 0 (and +Inf when q alone is 0).
func plogq(p, q float64) float64 {
	if p == 0 {
		return 0
	}
	return p * math.Log(p/q)
}

// Events returns the number of events the distributions are compared on.
func (d *Divergence) Events() int { return d.events }

func exp10(x float64) float64 { return math.Exp(x * math.Ln10) }

// Sentence returns the sum of KL(p || q) over the predictions of one
// sentence: its tokens and </s>, each from the tokens before it, starting
// from <s>. Each model reads a token outside its vocabulary, or <s>, as
// <unk>, as package score does.
func (d *Divergence) Sentence(tokens []string) float64 {
	d.p.begin()
	d.q.begin()
	total := 0.0
	for t := 0; t <= len(tokens); t++ {
		d.p.build()
		d.q.build()
		total += d.divergence()
		if t < len(tokens) {
			d.p.read(tokens[t])
			d.q.read(tokens[t])
		}
	}
	return total
}

// divergence returns KL(p || q) of the distributions just built, in time
// linear in the words stored after the context (see Divergence).
func (d *Divergence) divergence() float64 {
	if d.gen++; d.gen == 0 {
		clear(d.mark)
		d.gen = 1
	}
	d.touched = d.touched[:0]
	for _, s := range []*distribution{&d.p, &d.q} {
		for _, w := range s.stored {
			if ev := s.event[w]; ev >= 0 && ev < d.shared && d.mark[ev] != d.gen {
				d.mark[ev] = d.gen
				d.touched = append(d.touched, ev)
			}
		}
	}
	zp, op := d.p.total(d.shared)
	zq, oq := d.q.total(d.shared)
	// The shared words no model stores after the context: the
	// whole-vocabulary sums less those of the touched words.
	restLog, restP, restZeroQ := d.allLog, d.allP, d.allZeroQ
	kl := 0.0
	for _, e := range d.touched {
		wp, wq := d.p.word[e], d.q.word[e]
		up, uq := d.p.unigram[wp], d.q.unigram[wq]
		restLog -= plogq(up, uq)
		restP -= up
		if up > 0 && uq == 0 {
			restZeroQ--
		}
		x, y := d.p.prob(wp)/zp, d.q.prob(wq)/zq
		if x == 0 {
			continue
		}
		if y == 0 {
			return math.Inf(1)
		}
		kl += x * math.Log(x/y)
	}
	a, b := d.p.weight/zp, d.q.weight/zq
	if a > 0 && restP > 0 {
		if restZeroQ > 0 || b == 0 {
			return math.Inf(1)
		}
		kl += a * (restLog + math.Log(a/b)*restP)
	}
	if x, y := op/zp, oq/zq; x > 0 {
		if y == 0 {
			return math.Inf(1)
		}
		kl += x * math.Log(x/y)
	}
	return kl
}

// prob is the model's probability of word w at the current prediction.
func (s *distribution) prob(w uint32) float64 {
	if s.next.Listed(w) {
		return s.value[w]
	}
	return s.weight * s.unigram[w]
}

// total returns the model's total over every predictable word, and its
// mass on the "any other word" event, from the whole-vocabulary sums
// corrected for the stored words.
func (s *distribution) total(shared int32) (total, other float64) {
	restAll, restOther := s.allUnigram, s.otherUnigram
	for _, w := range s.stored {
		ev := s.event[w]
		if ev < 0 {
			continue
		}
		restAll -= s.unigram[w]
		total += s.value[w]
		if ev >= shared {
			restOther -= s.unigram[w]
			other += s.value[w]
		}
	}
	return total + s.weight*restAll, other + s.weight*restOther
}

func (s *distribution) begin() { s.state = s.m.StartState() }

func (s *distribution) read(token string) {
	id, ok := s.m.ID(token)
	if !ok || id == s.m.StartID() {
		id = s.m.UnknownID()
	}
	s.m.Next(&s.state, id)
}

// build takes the distribution at this prediction from the model
// (format.Successors, which applies the back-off rule): the words stored
// after some suffix of the context with their probabilities, and W, which
// every other word's unigram probability is multiplied by.
func (s *distribution) build() {
	s.next.Build(s.state)
	s.stored = s.next.Words()
	for i, lp := range s.next.LogProbs() {
		s.value[s.stored[i]] = exp10(lp)
	}
	s.weight = exp10(s.next.LogRest())
}
