package main

import (
	"strings"
	"testing"
)

// stutter returns a one-word prefix that a line repeats ("quantize" in
// "ingot: quantize: --trainer: quantize: ..."), or "".
func stutter(line string) string {
	seen := map[string]bool{}
	for _, seg := range strings.Split(line, ": ") {
		if strings.ContainsAny(seg, " \t") {
			continue
		}
		if seen[seg] {
			return seg
		}
		seen[seg] = true
	}
	return ""
}

// Every refusal of the bad-input table, and the framework's own refusals,
// read "ingot: COMMAND: what and where", with no prefix repeated.
func TestErrorsSpeakWithOneVoice(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	cases := [][]string{
		{"count", "$D/train.txt"},         // missing required flag
		{"explain", "$M"},                 // too few arguments
		{"keygen", "-o", "$D/k", "extra"}, // too many arguments
		{"inspect", "--colour", "$M"},     // unknown flag
		{"quantize", "--bits", "8", "--trainer", "guess", "-o", "$D/out", "$M"},
		{"score", "$D/absent.ingot"},
		{"tradeoff", "$M"},
		{"help", "frobnicate"},        // the framework's "Unknown help topic", exit 0
		{"completion", "tcsh"},        // the framework's help, exit 0
		{"compile", "--order", "abc"}, // a flag's value the parser refuses
		{"count", "--order", "3", "--min-word-count", "-1"},
		{"score", "--json=maybe", "$M"},
		{"compile", "-o"}, // a flag without its value
	}
	for _, tc := range badInputTable {
		cases = append(cases, tc.args)
	}
	for _, args := range cases {
		for i, a := range args {
			args[i] = strings.ReplaceAll(strings.ReplaceAll(a, "$D", dir), "$M", model)
		}
		code, _, stderr := ingot(t, args...)
		if code == exitOK {
			t.Errorf("%v: exit 0, want a refusal", args)
		}
		line := strings.TrimSuffix(stderr, "\n")
		want := "ingot: " + args[0] + ": "
		if args[0] == "frobnicate" {
			want = `ingot: unknown command "frobnicate"`
		}
		if !strings.HasPrefix(line, want) || strings.Contains(line, "\n") {
			t.Errorf("%v: %q does not start with %q on one line", args, stderr, want)
		}
		if s := stutter(line); s != "" {
			t.Errorf("%v: %q repeats a prefix (%q)", args, line, s)
		}
		for _, framework := range []string{"arg(s)", "flag(s)", ` for "ingot`, "strconv.", "invalid syntax", "flag needs an argument", "invalid argument"} {
			if strings.Contains(line, framework) {
				t.Errorf("%v: %q speaks in the framework's words (%q)", args, line, framework)
			}
		}
	}
}
