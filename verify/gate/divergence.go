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
// Each prediction costs time linear in the two vocabularies: the whole
// distribution is built (the stored successors of each stored context
// suffix, then every other word through the back-off weights), never one
// query per word.
type Divergence struct {
	p, q   distribution
	events int
}

// distribution builds one model's next-word distribution over the events.
type distribution struct {
	m       *format.Model
	event   []int32   // word id -> event; -1 for <s>
	unigram []float64 // P(w) of each word, 0 for <s>
	stamp   []uint32  // stamp[w] == gen: w already placed at this prediction
	gen     uint32
	dist    []float64 // per event, at the current prediction
	history []uint32  // the sentence so far as this model's ids, <s> first
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
		s.stamp = make([]uint32, len(s.event))
		s.dist = make([]float64, d.events)
	}
	return d
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

// divergence returns KL(p || q) of the distributions just built.
func (d *Divergence) divergence() float64 {
	zp, zq := 0.0, 0.0
	for e := range d.p.dist {
		zp += d.p.dist[e]
		zq += d.q.dist[e]
	}
	kl := 0.0
	for e, pe := range d.p.dist {
		x := pe / zp
		if x == 0 {
			continue
		}
		y := d.q.dist[e] / zq
		if y == 0 {
			return math.Inf(1)
		}
		kl += x * math.Log(x/y)
	}
	return kl
}

func (s *distribution) begin() {
	s.history = append(s.history[:0], s.m.StartID())
}

func (s *distribution) read(token string) {
	id, ok := s.m.ID(token)
	if !ok || id == s.m.StartID() {
		id = s.m.UnknownID()
	}
	s.history = append(s.history, id)
}

// build fills dist with the model's next-word distribution after the
// history, by the back-off rule: a word stored after the longest stored
// suffix h_j of the context that stores it gets the back-off weights of the
// longer stored suffixes times its stored probability; every other word
// gets all the weights times its unigram probability.
func (s *distribution) build() {
	clear(s.dist)
	if s.gen++; s.gen == 0 {
		clear(s.stamp)
		s.gen = 1
	}
	m := s.m
	weight := 1.0
	for j := min(len(s.history), m.Order()-1); j >= 1; j-- {
		e, ok := m.Find(s.history[len(s.history)-j:])
		if !ok {
			continue
		}
		a, b := m.ChildRange(j, e)
		for c := a; c < b; c++ {
			w := m.WordAt(j+1, c)
			if int(w) >= len(s.stamp) || s.stamp[w] == s.gen {
				continue
			}
			s.stamp[w] = s.gen
			if ev := s.event[w]; ev >= 0 {
				s.dist[ev] += weight * exp10(float64(m.LogProbAt(j+1, c)))
			}
		}
		weight *= exp10(float64(m.LogBackoffAt(j, e)))
	}
	for w, u := range s.unigram {
		if s.stamp[w] != s.gen {
			if ev := s.event[w]; ev >= 0 {
				s.dist[ev] += weight * u
			}
		}
	}
}
