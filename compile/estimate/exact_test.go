package estimate

import (
	"errors"
	"math"
	"strings"
	"testing"

	"ingot/compile/counts"
)

// scaled returns the counts of the sentences, each multiplied by f.
func scaled(t *testing.T, order int, sentences []string, f uint64) *counts.Counts {
	c := count(t, order, sentences)
	for k := range c.Levels {
		for i := range c.Levels[k].Counts {
			c.Levels[k].Counts[i] *= f
		}
	}
	return c
}

var small = []string{"a b c", "a b d", "b c a", "c a b d", "d d a"}

// Absolute discounting leaves h the mass D |A(h)| / c(h) (Ney, Essen and
// Kneser 1994; ESTIMATORS.md), however large the counts: with every count
// multiplied by 2^45, 1 - sum p cancels to a few units of rounding, but the
// weight must still be D |A(h)| / c(h) / (1 - sum of the lower-order
// probabilities), to 1e-9 relative.
func TestLeftOverMassWithoutCancellation(t *testing.T) {
	const f = 1 << 45
	c := scaled(t, 2, small, f)
	m := estimate(t, c, 2, Options{Method: Absolute, Discount: 0.5})
	a, _ := m.ID("a")
	var succ, total float64
	var lower float64
	for i := 0; i < m.Len(2); i++ {
		g := m.Gram(2, i)
		if g[0] != a {
			continue
		}
		succ++
		total += float64(c.Levels[1].Counts[c.Find(g)])
		lower += math.Pow(10, float64(m.Levels[0].LogProb[g[1]]))
	}
	want := 0.5 * succ / total / (1 - lower)
	got := math.Pow(10, float64(m.Levels[0].LogBackoff[a]))
	if math.Abs(got/want-1) > 1e-6 { // float32 storage of log10: 1e-7 relative
		t.Errorf("bow(a) = %.9g, want D|A|/c(h)/(1-L) = %.9g", got, want)
	}
	for _, method := range []Method{Katz, Absolute} {
		m := estimate(t, c, 2, Options{Method: method})
		for k := 1; k < m.Order(); k++ {
			for i, b := range m.Levels[k-1].LogBackoff {
				if math.IsInf(float64(b), 0) || math.IsNaN(float64(b)) {
					t.Errorf("%s: order %d %q has log10 weight %v", method, k, m.Words(m.Gram(k, i)), b)
				}
			}
		}
	}
}

// Counts whose total exceeds 2^53 cannot be represented exactly in float64
// (IEEE 754 binary64 has a 53-bit significand): every method refuses them,
// naming the context.
func TestTotalsBeyondExactArithmeticRefused(t *testing.T) {
	c := scaled(t, 2, small, 1<<51)
	for _, method := range Methods {
		_, _, err := Estimate(c, Options{Method: method, Order: 2})
		if err == nil || !strings.Contains(err.Error(), "2^53") {
			t.Errorf("%s: %v, want a refusal naming 2^53", method, err)
		}
	}
	// Below the limit: a total of 2^52 is estimated.
	c = scaled(t, 1, []string{"a"}, 1<<51) // a and </s>, 2^51 each
	if _, _, err := Estimate(c, Options{Method: WittenBell, Order: 1}); err != nil {
		t.Errorf("a total of 2^52: %v", err)
	}
}

// A discount so small that a context keeps no mass for unseen words (the
// left-over D |A(h)| / c(h) underflows to zero) is refused as an option
// error naming the discount; a small but representable one (1e-17, which
// the old subtraction cancelled to zero) gives a model with finite values.
func TestTinyDiscount(t *testing.T) {
	c := count(t, 2, small)
	m := estimate(t, c, 2, Options{Method: Absolute, Discount: 1e-17})
	for k := 1; k < m.Order(); k++ {
		for i, b := range m.Levels[k-1].LogBackoff {
			if math.IsInf(float64(b), 0) || math.IsNaN(float64(b)) {
				t.Errorf("order %d %q has log10 weight %v", k, m.Words(m.Gram(k, i)), b)
			}
		}
	}
	_, _, err := Estimate(c, Options{Method: Absolute, Discount: 5e-324, Order: 2})
	var oe *OptionError
	if !errors.As(err, &oe) || oe.Option != "discount" {
		t.Errorf("discount 5e-324: %v, want an option error naming the discount", err)
	}
}

// A discount that leaves mass for unseen words in the empty context but
// none in a context seen often with one successor: D |A(h)| / c(h)
// underflows to zero only there (IEEE 754 binary64: 1e-321 / 1000 is below
// half the smallest subnormal, 4.9e-324, so it rounds to zero). Every
// unigram gets a positive probability, so the refusal can come only from
// the check of the top order's contexts: it names the discount and the
// context.
func TestTinyDiscountRefusedInTheTopOrdersContexts(t *testing.T) {
	var lines []string
	for range 1000 {
		lines = append(lines, "a b")
	}
	lines = append(lines, "c d e f g h i j k l m n o p q r s t u v w x y z")
	c := count(t, 2, lines)
	if _, _, err := Estimate(c, Options{Method: Absolute, Discount: 1e-320, Order: 2}); err != nil {
		t.Fatalf("discount 1e-320: %v, want a model", err)
	}
	m1, _, err := Estimate(c, Options{Method: Absolute, Discount: 1e-321, Order: 1})
	if err != nil {
		t.Fatalf("discount 1e-321, order 1: %v, want a model", err)
	}
	if m1.Order() != 1 {
		t.Fatalf("order %d", m1.Order())
	}
	_, _, err = Estimate(c, Options{Method: Absolute, Discount: 1e-321, Order: 2})
	var oe *OptionError
	if !errors.As(err, &oe) || oe.Option != "discount" || !strings.Contains(err.Error(), "order 1 context") {
		t.Errorf("discount 1e-321, order 2: %v, want an option error naming the discount and an order-1 context", err)
	}
	// The streamed estimator (compile within a memory budget) refuses it
	// with the same words.
	_, _, serr := streamed(t, c, Options{Method: Absolute, Discount: 1e-321, Order: 2}, 1<<20)
	if err == nil || serr == nil || serr.Error() != err.Error() {
		t.Errorf("streamed: %v, want %v", serr, err)
	}
}
