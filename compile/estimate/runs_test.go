package estimate

import (
	"bytes"
	"reflect"
	"runtime"
	"strings"
	"testing"

	"ingot/format"
)

// Discounting an order's contexts in many runs on several goroutines, each
// run with its own tally of corner-case rules, gives the model and the
// report (fallback lines and their counts included) of discounting them in
// one run on one core, for every method. Katz on this text takes its rule
// for contexts whose successors all have counts above K in many contexts,
// which the runs count apart.
func TestRunsGiveOneRunsModel(t *testing.T) {
	train, _ := sotu(t, 1500)
	c := count(t, 4, train)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	defer func(n int) { runsPerCore = n }(runsPerCore)
	build := func(opt Options, procs, runs int) ([]byte, *Report) {
		runtime.GOMAXPROCS(procs)
		runsPerCore = runs
		tb, rep, err := Estimate(c, opt)
		if err != nil {
			t.Fatal(err)
		}
		b, err := format.Marshal(tb)
		if err != nil {
			t.Fatal(err)
		}
		return b, rep
	}
	ruled := false
	for _, opt := range []Options{
		{Method: KneserNey}, {Method: Katz}, {Method: Katz, KatzThreshold: 2}, {Method: Absolute},
		{Method: Absolute, AutoDiscount: true}, {Method: WittenBell}, {Method: KneserNey, UnigramsBackedOff: true},
	} {
		opt.Order = 4
		want, wrep := build(opt, 1, 1)
		got, grep := build(opt, 5, 64)
		if !bytes.Equal(got, want) {
			t.Errorf("%+v: the model of many runs (%d bytes) differs from that of one (%d bytes)", opt, len(got), len(want))
		}
		if !reflect.DeepEqual(grep, wrep) {
			t.Errorf("%+v: report of many runs %+v, of one %+v", opt, grep, wrep)
		}
		for _, o := range wrep.Orders {
			for _, f := range o.Fallbacks {
				ruled = ruled || strings.Contains(f, "whose successors all have counts above")
			}
		}
	}
	if !ruled {
		t.Error("no Katz context took the rule: the tallies' merge is not exercised")
	}
}

// A tally merged from the tallies of consecutive runs counts each rule's
// contexts and lists the rules in the order they first applied over all
// runs, as one tally over every context would.
func TestTallyMergeKeepsFirstUse(t *testing.T) {
	var whole, merged tally
	runs := [][]rule{{}, {ruleAllAbove, ruleAllAbove}, {ruleCovered, ruleAllAbove}, {ruleCovered}}
	for _, run := range runs {
		var part tally
		for _, r := range run {
			part.add(r)
			whole.add(r)
		}
		merged.merge(&part)
	}
	if !reflect.DeepEqual(merged, whole) || !reflect.DeepEqual(whole.first, []rule{ruleAllAbove, ruleCovered}) || whole.count != [rules]int{2, 3} {
		t.Errorf("merged %+v, one tally %+v", merged, whole)
	}
}
