package pipeline_test

import (
	"fmt"

	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/pipeline"
	"ingot/compile/tables"
	"ingot/format"
)

// Example builds a model from counts, prunes it to a budget and records
// each step, as ingot compile and ingot prune do, without the command line.
func Example() {
	c, _ := counts.NewCounter(2)
	for _, s := range [][]string{
		{"turn", "the", "beacon", "on"}, {"turn", "the", "beacon", "off"}, {"log", "the", "heron", "count"},
	} {
		c.AddSentence(s)
	}
	built, err := pipeline.Compile{
		Estimate: estimate.Options{Method: estimate.WittenBell, Order: 2},
		Command:  pipeline.Record([]string{"ingot", "compile", "--method", "witten-bell", "--order", "2", "-o", "m.ingot", "c.txt"}, "", tables.Input{Name: "c.txt", Bytes: 120, SHA256: "(digest)"}),
	}.Run(c.Counts(1))
	if err != nil {
		fmt.Println(err)
		return
	}
	full, _ := format.FileSize(built.Model, format.Planned{})
	small, err := pipeline.Prune{DropBelow: 0.05, Command: pipeline.Record([]string{"ingot", "prune", "--drop-below", "0.05"}, "")}.Run(built.Model)
	if err != nil {
		fmt.Println(err)
		return
	}
	size, _ := format.FileSize(small.Model, format.Planned{})
	fmt.Println("bigrams:", built.Model.Len(2), "then", small.Model.Len(2))
	fmt.Println("file bytes:", full, "then", size) // the record grew by a command
	for _, c := range small.Model.Info.Commands {
		fmt.Println(c.Line)
	}
	fmt.Println(small.Model.Info.History[0][:37])
	// Output:
	// bigrams: 12 then 4
	// file bytes: 1152 then 1248
	// ingot compile --method witten-bell --order 2 -o m.ingot c.txt
	// ingot prune --drop-below 0.05
	// pruned by relative entropy below 0.05
}
