//go:build ignore

// generate writes the invented demo corpus: spoken commands that rangers of
// the fictional Marrowfen wetland reserve say to their handheld field unit.
// Every name here is made up. Besides the general training and held-out
// commands it writes the unit's fixed word list (what its recogniser can
// say) and the logs of one unit, the night patrol's, for adaptation.
//
//	go run cmd/ingot/demodata/generate.go
package main

import (
	"fmt"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
)

var (
	places   = []string{"the north ridge", "the reed bed", "the old sluice", "the heron hide", "the east dyke", "the willow carr", "the peat cutting", "the boardwalk", "the south pool", "the alder wood", "the visitor gate", "the pump house", "the otter holt", "the lower meadow", "the fen edge"}
	animals  = []string{"heron", "bittern", "otter", "marsh harrier", "water vole", "kingfisher", "grass snake", "reed warbler", "crane", "teal", "dragonfly", "barn owl", "egret", "roe deer"}
	counts   = []string{"one", "two", "three", "four", "five", "six", "a pair of", "a group of", "several"}
	plural   = map[string]string{"heron": "herons", "bittern": "bitterns", "otter": "otters", "marsh harrier": "marsh harriers", "water vole": "water voles", "kingfisher": "kingfishers", "grass snake": "grass snakes", "reed warbler": "reed warblers", "crane": "cranes", "teal": "teal", "dragonfly": "dragonflies", "barn owl": "barn owls", "egret": "egrets", "roe deer": "roe deer"}
	devices  = []string{"beacon", "radio", "torch", "camera", "water gauge", "gps", "screen", "recorder"}
	states   = []string{"on", "off"}
	levels   = []string{"high", "low", "normal", "rising", "falling"}
	people   = []string{"base", "the warden", "team two", "the night patrol", "the boat crew", "the gate post"}
	weather  = []string{"wind", "rain", "fog", "frost", "visibility"}
	numbers  = []string{"ten", "twenty", "thirty", "forty", "fifty", "a hundred", "two hundred"}
	surfaces = []string{"flooded", "muddy", "blocked", "clear", "icy", "damaged"}
)

func pick(r *rand.Rand, xs []string) string { return xs[r.IntN(len(xs))] }

func animal(r *rand.Rand) string {
	a := pick(r, animals)
	c := pick(r, counts)
	if c == "one" {
		return "one " + a
	}
	return c + " " + plural[a]
}

func sentence(r *rand.Rand) string {
	switch r.IntN(14) {
	case 0:
		return "mark waypoint at " + pick(r, places)
	case 1:
		return "log sighting of " + animal(r) + " near " + pick(r, places)
	case 2:
		return "turn the " + pick(r, devices) + " " + pick(r, states)
	case 3:
		return "call " + pick(r, people)
	case 4:
		return "call " + pick(r, people) + " and say " + pick(r, []string{"all clear", "need assistance", "on my way", "returning to base", "path is " + pick(r, surfaces)})
	case 5:
		return "water level at " + pick(r, places) + " is " + pick(r, levels)
	case 6:
		return "record " + pick(r, weather) + " " + pick(r, []string{"strong", "light", "heavy", "poor", "good"})
	case 7:
		return "navigate to " + pick(r, places)
	case 8:
		return "how far to " + pick(r, places)
	case 9:
		return "the path to " + pick(r, places) + " is " + pick(r, surfaces)
	case 10:
		return "start a new survey at " + pick(r, places)
	case 11:
		return "log " + animal(r) + " flying " + pick(r, []string{"north", "south", "east", "west"}) + " over " + pick(r, places)
	case 12:
		return "set an alarm for " + pick(r, numbers) + " minutes"
	default:
		return "read back the last " + pick(r, []string{"sighting", "waypoint", "message", "note", "reading"})
	}
}

// nightSentence is what the night patrol's unit hears: its own animals and
// lights, words the general commands never use (spoonbill, lantern, which
// the unit's word list holds), and now and then a hesitation the list
// lacks.
func nightSentence(r *rand.Rand) string {
	var s string
	switch r.IntN(6) {
	case 0, 1:
		a := pick(r, []string{"barn owl", "otter", "roe deer", "spoonbill", "bittern"})
		c := pick(r, []string{"one", "two", "a pair of"})
		if c == "one" {
			s = "log sighting of one " + a + " near " + pick(r, places)
		} else {
			s = "log sighting of " + c + " " + map[string]string{"barn owl": "barn owls", "otter": "otters", "roe deer": "roe deer", "spoonbill": "spoonbills", "bittern": "bitterns"}[a] + " near " + pick(r, places)
		}
	case 2:
		s = "turn the " + pick(r, []string{"torch", "lantern", "lantern", "recorder"}) + " " + pick(r, states)
	case 3:
		s = "call the night patrol and say " + pick(r, []string{"all clear", "on my way", "need assistance"})
	case 4:
		s = "record visibility " + pick(r, []string{"poor", "good"})
	default:
		s = sentence(r)
	}
	if r.IntN(12) == 0 {
		s = pick(r, []string{"um", "er", "okay"}) + " " + s
	}
	return s
}

func write(name string, r *rand.Rand, n int, gen func(*rand.Rand) string) []string {
	var b strings.Builder
	var lines []string
	for i := 0; i < n; i++ {
		line := gen(r)
		lines = append(lines, line)
		b.WriteString(line)
		b.WriteByte('\n')
	}
	if err := os.WriteFile(name, []byte(b.String()), 0o644); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	return lines
}

// writeWordList writes the unit's fixed word list: every word of the
// general commands but a few the unit's recogniser leaves out, plus words
// of its newer firmware that the general commands never use.
func writeWordList(name string, commands []string) {
	drop := map[string]bool{"gps": true, "egret": true, "egrets": true}
	seen := map[string]bool{"spoonbill": true, "spoonbills": true, "lantern": true}
	for _, l := range commands {
		for _, w := range strings.Fields(l) {
			if !drop[w] {
				seen[w] = true
			}
		}
	}
	var words []string
	for w := range seen {
		words = append(words, w)
	}
	slices.Sort(words)
	if err := os.WriteFile(name, []byte(strings.Join(words, "\n")+"\n"), 0o644); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func main() {
	r := rand.New(rand.NewPCG(2026, 12))
	commands := write("cmd/ingot/demodata/commands.txt", r, 4000, sentence)
	write("cmd/ingot/demodata/heldout.txt", r, 300, sentence)
	writeWordList("cmd/ingot/demodata/wordlist.txt", commands)
	write("cmd/ingot/demodata/unit-logs.txt", r, 600, nightSentence)
	write("cmd/ingot/demodata/unit-heldout.txt", r, 200, nightSentence)
}
