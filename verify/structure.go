package verify

import (
	"fmt"
	"math"
	"strings"

	"ingot/format"
)

// The table checks report what format.Model.CheckStructure finds, the one
// checker of the format's structural rules (Model.Verify calls it too),
// rule by rule; verify adds only the rules about probabilities that the
// format leaves open (no probability above one, <s> never predicted, no
// -Inf outside <s>) and reads every value through the model.

// structure holds the problems CheckStructure found, by rule.
type structure struct {
	applied  format.Rules
	problems map[format.Rule][]format.Problem
}

// checkStructure runs the format's structural checker once.
func (v *verifier) checkStructure() *structure {
	s := &structure{problems: map[format.Rule][]format.Problem{}}
	s.applied = v.m.CheckStructure(func(r format.Rule, p format.Problem) bool {
		s.problems[r] = append(s.problems[r], p)
		return true
	})
	return s
}

// record adds the check name with the problems of rule, or as not run
// when the rule was not applied.
func (v *verifier) record(s *structure, name string, rule format.Rule, detail, notRun string) {
	if !s.applied.Has(rule) {
		v.notRun(notRun, name)
		return
	}
	v.add(v.ruleCheck(s, name, rule, detail))
}

func (v *verifier) ruleCheck(s *structure, name string, rule format.Rule, detail string) Check {
	c := Check{Name: name, Status: Pass, Detail: detail}
	for _, p := range s.problems[rule] {
		c.problem(p.Section, p.Offset, "%s", p.Msg)
	}
	return c
}

// entryName names entry i of order k for problems, with its words.
func (v *verifier) entryName(k, i int) string {
	return fmt.Sprintf("entry %d (%q)", i, v.words(v.m.Gram(k, i, nil)))
}

// words spells out word ids.
func (v *verifier) words(g []uint32) string {
	s := make([]string, len(g))
	for j, id := range g {
		s[j] = v.m.Word(id)
	}
	return strings.Join(s, " ")
}

// checkValues reports the format's value rules (no NaN or +Inf, codebook
// indexes inside their codebooks, codebooks ascending) and checks what a
// probability must be: at most 1, -Inf only for the unigram <s>, which
// must hold it, and every back-off weight finite.
func (v *verifier) checkValues(s *structure) {
	c := v.ruleCheck(s, CheckValues, format.RuleValues, "no NaN or infinity (but the unigram <s>), no probability above 1, back-off weights finite")
	defer func() { v.add(c) }()
	m := v.m
	start := int(m.StartID())
	for k := 1; k <= m.Order(); k++ {
		for i := 0; i < m.Count(k); i++ {
			p := float64(m.LogProbAt(k, i))
			if math.IsNaN(p) || math.IsInf(p, 1) {
				continue // the format's rule
			}
			isStart := k == 1 && i == start
			switch {
			case isStart && math.IsInf(p, -1):
			case isStart:
				name, at := m.ValueOffset(k, i, false)
				c.problem(name, at, "the unigram <s> has log10 probability %v; <s> is never predicted and holds -Inf", p)
			case math.IsInf(p, -1):
				name, at := m.ValueOffset(k, i, false)
				c.problem(name, at, "%s has log10 probability %v", v.entryName(k, i), p)
			case p > 0:
				name, at := m.ValueOffset(k, i, false)
				c.problem(name, at, "%s has log10 probability %v: a probability above 1", v.entryName(k, i), p)
			}
		}
		if k == m.Order() {
			break
		}
		for i := 0; i < m.Count(k); i++ {
			if b := float64(m.LogBackoffAt(k, i)); math.IsInf(b, -1) {
				name, at := m.ValueOffset(k, i, true)
				c.problem(name, at, "%s has log10 back-off weight %v", v.entryName(k, i), b)
			}
		}
	}
}
