package format_test

import (
	"fmt"

	"ingot/compile/tables"
	"ingot/format"
)

// Example scores a sentence word by word, the way a decoder does: one State
// carried from word to word, starting after <s>, ending with </s>, and words
// outside the vocabulary mapped to <unk>.
func Example() {
	m, err := format.Open("../spec/golden/tiny.ingot")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer m.Close()

	s := m.StartState()
	total := 0.0
	for _, word := range []string{"the", "fog", "horn", "sounded", "twice", "</s>"} {
		id, ok := m.ID(word)
		if !ok {
			id = m.UnknownID()
		}
		lp := m.Next(&s, id)
		total += lp
		fmt.Printf("%-8s %8.4f\n", word, lp)
	}
	fmt.Printf("sentence %8.4f\n", total)
	// Output:
	// the       -0.2218
	// fog       -0.4559
	// horn      -0.2218
	// sounded   -0.0969
	// twice     -1.9294
	// </s>      -0.8239
	// sentence  -3.7499
}

// ExampleModel_Explain shows how one prediction backs off.
func ExampleModel_Explain() {
	m, err := format.Open("../spec/golden/tiny.ingot")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer m.Close()

	ids := func(words ...string) []uint32 {
		out := make([]uint32, len(words))
		for i, w := range words {
			out[i], _ = m.ID(w)
		}
		return out
	}
	ex := m.Explain(ids("the", "lamp"), ids("beam")[0])
	for _, b := range ex.Backoffs {
		fmt.Printf("back-off of %-9s %8.4f\n", words(m, b.Context), b.LogBackoff)
	}
	fmt.Printf("stored at order %d     %8.4f\n", ex.MatchedOrder, ex.StoredLogProb)
	fmt.Printf("log10 P(beam | the lamp) = %.4f\n", ex.LogProb)
	// Output:
	// back-off of the lamp   -0.2218
	// back-off of lamp       -0.4260
	// stored at order 1      -1.3010
	// log10 P(beam | the lamp) = -1.9488
}

func words(m *format.Model, ids []uint32) string {
	s := ""
	for i, id := range ids {
		if i > 0 {
			s += " "
		}
		s += m.Word(id)
	}
	return s
}

// ExampleWrite writes a unigram model built by hand and reads it back.
func ExampleWrite() {
	t := &tables.Tables{
		Vocab: []string{"</s>", "<s>", "<unk>", "ahoy"}, // sorted bytewise
		Levels: []tables.Level{{
			Words:   []uint32{0, 1, 2, 3},
			LogProb: []float32{-0.5, tables.NoProb, -1, -0.5},
		}},
		Info: tables.Info{Method: "hand-built"},
	}
	data, err := format.Marshal(t)
	if err != nil {
		fmt.Println(err)
		return
	}
	m, err := format.FromBytes(data)
	if err != nil {
		fmt.Println(err)
		return
	}
	id, _ := m.ID("ahoy")
	fmt.Printf("%d bytes, order %d, %d words, log10 P(ahoy) = %.1f\n", len(data), m.Order(), m.VocabSize(), m.LogProb(nil, id))
	// Output:
	// 432 bytes, order 1, 4 words, log10 P(ahoy) = -0.5
}
