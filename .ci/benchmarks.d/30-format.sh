#!/usr/bin/env bash
# Format version 3 against the tables layout (version 2), issue 11: file
# size per n-gram and what each part of the file costs; per-word scoring
# against a pointer chase over a buffer of the model's size (same process,
# same rounds, medians), on the bundled corpus and on a generated model
# larger than the caches; open time of a tiny, a middle and a large model;
# full verification against one lookup per n-gram; compile time against
# the time to read and parse its counts. At load averages of 20-25 on this
# 2-core machine the first benchmark took 43 minutes and the second 24.
set -euo pipefail
cmd1="go test ./format -run '^\$' -bench 'Layouts\$' -benchtime 1x -timeout 150m"
cmd2="go test ./format -run '^\$' -bench LayoutsGenerated -benchtime 1x -timeout 150m"
up1=$(cut -d' ' -f1-3 /proc/loadavg)
out=$(go test ./format -run '^$' -bench 'Layouts$' -benchtime 1x -timeout 150m)
up2=$(cut -d' ' -f1-3 /proc/loadavg)
out2=$(go test ./format -run '^$' -bench LayoutsGenerated -benchtime 1x -timeout 150m)
up3=$(cut -d' ' -f1-3 /proc/loadavg)
line=$(printf '%s\n' "$out" | grep '^BenchmarkLayouts-')
line2=$(printf '%s\n' "$out2" | grep '^BenchmarkLayoutsGenerated')
get() { printf '%s\n' "$1" | awk -v k="$2" '{ for (i = 3; i <= NF; i++) if ($i == k) { print $(i-1); exit } }'; }
v() { get "$line" "$1"; }
g() { get "$line2" "$1"; }
f() { printf "%.${1}f" "$2"; }

echo "## Model file layout (format version 3, issue 11)"
echo
echo "The 5-gram Kneser-Ney model of nine tenths of the bundled State of the Union"
echo "text (every tenth sentence held out; $(v ngrams) n-grams), written in the"
echo "tables layout (version 2) and in the succinct layout (version 3). Whole"
echo "file, vocabulary included. Target: at most 2.5 bytes per n-gram at 8 bits."
echo
echo "| model | version 2 bytes/n-gram | version 3 bytes/n-gram |"
echo "| --- | ---: | ---: |"
for m in float 8-bit 4-bit; do
	printf '| %s | %.2f | %.2f |\n' "$m" "$(v "$m-v2-bytes/ngram")" "$(v "$m-v3-bytes/ngram")"
done
echo
echo "Where the bytes of the 8-bit version-3 file go (bytes per n-gram of the"
echo "whole file; codebooks counted with their column):"
echo
echo "| part | bytes/n-gram |"
echo "| --- | ---: |"
for p in keys probs backoffs starts marks vocab other; do
	name=$(case $p in
		keys) echo "last-word keys (successor ranks from order 3; per order one Elias-Fano sequence or key lists)" ;;
		probs) echo "probabilities (8-bit indexes; unigrams in a codebook of their own)" ;;
		backoffs) echo "back-off weights (contexts only)" ;;
		starts) echo "child starts (Elias-Fano, contexts only)" ;;
		marks) echo "context marks and their rank counters" ;;
		vocab) echo "vocabulary (word starts, word text, word hash)" ;;
		other) echo "header, directory, summary, build info, alignment" ;;
		esac)
	printf '| %s | %.3f |\n' "$name" "$(v "part-$p-B/ngram")"
done
echo
printf 'Keys cost %.2f bits each. The %.0f stored back-off weights take %.2f bits\n' "$(v keys-bits/key)" "$(v backoffs-stored)" "$(v backoffs-bits/value)"
printf 'each on average, section bytes without codebooks (their codebook indexes are\n'
printf '%.2f bits wide on average: the quantizer widens the back-off codebooks to\n' "$(v backoffs-index-bits/value)"
printf 'up to 16 bits, one bit at a time, so that every context sums to one within\n'
printf '1e-4, issue 9, and moves weights onto its 255 most used levels where that\n'
printf 'keeps the sum (quantize/cheapen.go); the writer\n'
printf 'stores such a column tiered, spec/FORMAT.md 4.8.6, its frequent levels in\n'
printf 'narrow values), while the entropy\n'
printf 'of those indexes is %.2f bits; the probability indexes take %.2f bits, entropy\n' "$(v backoffs-entropy-bits/value)" "$(v probs-bits/value)"
printf '%.2f. Coding each value at its entropy would save %.3f bytes per n-gram on\n' "$(v probs-entropy-bits/value)" \
	"$(awk -v sb="$(v backoffs-stored)" -v wb="$(v backoffs-bits/value)" -v eb="$(v backoffs-entropy-bits/value)" \
		-v sp="$(v probs-stored)" -v wp="$(v probs-bits/value)" -v ep="$(v probs-entropy-bits/value)" -v n="$(v ngrams)" \
		'BEGIN { print (sb * (wb - eb) + sp * (wp - ep)) / 8 / n }')"
echo "these two columns alone."
if [ -n "$(v keys-sibling-bits/key)" ]; then
	echo
	echo "Last-word keys per order, in bits per key: as the writer stores them, and"
	echo "in each of the three encodings it chooses from per order, the shortest"
	echo "(spec/FORMAT.md 4.8.2: one Elias-Fano sequence per order; 4.8.7: key"
	echo "lists, each sibling list at the width of its largest key, found through"
	echo "an Elias-Fano sequence of list starts read with the parent's context rank;"
	echo "4.8.8: coded key lists, each list of two keys or more at one width, in"
	echo "Elias-Fano or as the run 0 .. d-1, as its 2-bit kind says):"
	echo
	echo "| model | order | stored as | bits/key | one sequence | key lists | coded lists |"
	echo "| --- | ---: | --- | ---: | ---: | ---: | ---: |"
	for src in v g; do
		for k in 2 3 4 5; do
			[ -n "$($src keys-o$k-bits/key)" ] || continue
			printf '| %s | %s | %s | %.2f | %.2f | %.2f | %.2f |\n' "$([ $src = v ] && echo 'bundled corpus' || echo generated)" "$k" \
				"$(awk -v x="$($src keys-o$k-form)" 'BEGIN { print (x > 1.5 ? "coded lists" : x > 0.5 ? "key lists" : "one sequence") }')" \
				"$($src keys-o$k-bits/key)" "$($src keys-o$k-one-bits/key)" "$($src keys-o$k-lists-bits/key)" "$($src keys-o$k-coded-bits/key)"
		done
	done
	echo
	printf 'Whole 8-bit file in bytes per n-gram, bundled corpus: %.3f as written,\n' "$(v 8-bit-v3-bytes/ngram)"
	printf '%.3f with one sequence at every order, %.3f with key lists at every\n' "$(v one-bytes/ngram)" "$(v lists-bytes/ngram)"
	printf 'order; generated model: %.3f, %.3f and %.3f. As the writer wrote\n' "$(g v3-bytes/ngram)" "$(g one-bytes/ngram)" "$(g lists-bytes/ngram)"
	printf 'it before coded lists (the shorter of the first two per order): %.3f\n' "$(v uncoded-bytes/ngram)"
	printf 'and %.3f, and scoring the held-out text, side by side with that file,\n' "$(g uncoded-bytes/ngram)"
	printf 'takes %.2f (bundled corpus) and %.2f (generated) of its time. Keys coded\n' "$(v keys-written/uncoded)" "$(g keys-written/uncoded)"
	printf 'per list under the universe a reader knows (the vocabulary, or the\n'
	printf "successor count of the parent's suffix: a run when every successor is\n"
	printf 'there, else Elias-Fano under it or one width) would take %.3f bytes per\n' "$(v keys-universe-bytes/ngram)"
	printf 'n-gram with their list starts, the whole file %.3f; their information\n' "$(v universe-bytes/ngram)"
	printf 'bound (log2 of the number of subsets of each universe of the list'"'"'s size)\n'
	printf 'is %.3f bytes per n-gram. The bound measured\n' "$(v keys-bound-bytes/ngram)"
	printf 'before key lists existed (each list at the smaller of Elias-Fano and a\n'
	printf 'fixed width over the universe a reader knows, the vocabulary or the\n'
	printf "successor count of the parent's suffix): %.2f bits per key for the lists\n" "$(v keys-lists-bits/key)"
	printf 'alone, %.2f with list starts, against %.2f as stored now. Scoring the\n' "$(v keys-sibling-bits/key)" "$(v keys-bits/key)"
	printf 'held-out text with the three files side by side (five interleaved\n'
	printf 'rounds, medians; ratios to one sequence at every order): bundled corpus\n'
	printf '%.0f ns/word as written (%.2f), %.0f with key lists at every order\n' "$(v keys-written-ns/word)" "$(v keys-written/one)" "$(v keys-lists-ns/word)"
	printf '(%.2f), %.0f with one sequence; generated model %.0f (%.2f), %.0f\n' "$(v keys-lists/one)" "$(v keys-one-ns/word)" "$(g keys-written-ns/word)" "$(g keys-written/one)" "$(g keys-lists-ns/word)"
	printf '(%.2f), %.0f. A key list costs the lines of its start'"'"'s Elias-Fano\n' "$(g keys-lists/one)" "$(g keys-one-ns/word)"
	printf 'select and then its own, where one sequence'"'"'s select lands on the keys\n'
	printf 'themselves, so lists read more lines per word (section 31-reads): the\n'
	printf 'writer chooses them for size, at a cost in speed. With every column at\n'
	printf 'its entropy and keys at the\n'
	printf 'lists-alone figure (a floor no layout with random access reaches), the\n'
	printf 'file would take %.2f bytes per n-gram; the back-off weights, %.2f bytes\n' \
		"$(awk -v t="$(v 8-bit-v3-bytes/ngram)" -v sb="$(v backoffs-stored)" -v wb="$(v backoffs-bits/value)" -v eb="$(v backoffs-entropy-bits/value)" \
			-v sp="$(v probs-stored)" -v wp="$(v probs-bits/value)" -v ep="$(v probs-entropy-bits/value)" -v n="$(v ngrams)" \
			-v kb="$(v keys-bits/key)" -v kl="$(v keys-lists-bits/key)" -v k="$(v keys)" \
			'BEGIN { print t - (sb * (wb - eb) + sp * (wp - ep) + k * (kb - kl)) / 8 / n }')" "$(v part-backoffs-B/ngram)"
	printf 'per n-gram at the widths issue 9 needs, are what keeps the target out of\n'
	printf 'reach on this model.\n'
fi
echo
echo "Scoring held-out text word by word with \`Model.Next\` (8-bit models,"
echo "five rounds, medians), against one dependent random access over a buffer"
echo "of the version-3 file's size (a pointer chase), measured in the same"
echo "rounds. Target: at most 3 accesses per word on models larger than the"
echo "caches (32 MB and up). The generated model is the 5-gram Kneser-Ney model"
echo "of \`corpus.Generate\` (seed 1, 230,000 sentences, 50,000 words; every"
echo "tenth sentence held out, $(g ngrams) n-grams, $(f 2 "$(g v3-bytes/ngram)") bytes per"
echo "n-gram in version 3, $(f 2 "$(g v2-bytes/ngram)") in version 2)."
echo
echo "| model | layout | file MiB | words | ns/word | one access, ns | ratio |"
echo "| --- | --- | ---: | ---: | ---: | ---: | ---: |"
printf '| bundled corpus | version 3 | %.1f | %.0f | %.0f | %.1f | %.2f |\n' "$(v v3-MiB)" "$(v words)" "$(v v3-ns/word)" "$(v chase-ns)" "$(v v3/chase)"
printf '| bundled corpus | version 2 | | %.0f | %.0f | %.1f | %.2f |\n' "$(v words)" "$(v v2-ns/word)" "$(v chase-ns)" "$(v v2/chase)"
printf '| generated | version 3 | %.1f | %.0f | %.0f | %.1f | %.2f |\n' "$(g v3-MiB)" "$(g words)" "$(g v3-ns/word)" "$(g chase-ns)" "$(g v3/chase)"
printf '| generated | version 2 | %.1f | %.0f | %.0f | %.1f | %.2f |\n' "$(g v2-MiB)" "$(g words)" "$(g v2-ns/word)" "$(g chase-ns)" "$(g v2/chase)"
echo
echo "(Version 2's ratio is against the same chase, over a buffer of the"
echo "version-3 file's size.)"
echo
echo "What bounds version 3's speed: for each stored suffix of the context,"
echo "finding the word's entry is a chain of dependent reads: the context's mark"
echo "and rank counter (its rank among the contexts), the child-start sample and"
echo "the high bits after it (an Elias-Fano select, a scan of about four 64-bit"
echo "words from a sample every 256 values), the keys' sample and high bits"
echo "before the first child, then the key scan (with key lists: the list"
echo "start's sample and high bits, read with the same rank as the child start,"
echo "then the list itself); at orders 3 and up the key is"
echo "the rank found one order below, so the scans run order after order. Version"
echo "2 reads a child start and binary-searches plain word ids. \`Model.Next\`"
echo "starts the reads of all orders' chains together (one link of every order"
echo "before the next link of any); measured in one process against the same"
echo "code without that, it takes 0.84-0.94 of the time. Keys as word ids instead"
echo "of successor ranks (measured once, not kept) made scoring about 1.2 times"
echo "faster and the 8-bit file 1.31 times larger."
echo
echo "Open time (median of 200 opens of a mapped file; open reads the header,"
echo "directory, summary, build info, codebooks and fixed fields, no n-gram):"
echo
echo "| model | n-grams | open, ns |"
echo "| --- | ---: | ---: |"
printf '| golden tiny.v3.ingot | %.0f | %.0f |\n' "$(v tiny-ngrams)" "$(v open-tiny-ns)"
printf '| bundled corpus, 8-bit | %.0f | %.0f |\n' "$(v ngrams)" "$(v open-large-ns)"
printf '| generated, 8-bit | %.0f | %.0f |\n' "$(g ngrams)" "$(g open-ns)"
echo
printf 'Verification of the 8-bit version-3 file of the bundled corpus: one lookup\n'
printf '(`Model.Find`) of every n-gram in random order takes %.2f s; `Model.Verify`\n' "$(v lookups-s)"
printf '(structure, checksums) %.2f s (%.2f times); `ingot verify` (every check,\n' "$(v model-verify-s)" "$(v model-verify/lookups)"
printf 'normalisation included) %.2f s (%.2f times). Target: at most 3 times.\n' "$(v ingot-verify-s)" "$(v ingot-verify/lookups)"
echo
printf 'Compiling the counts of the bundled corpus (a %.1f MiB binary count file:\n' "$(v counts-MiB)"
printf 'read and parse, estimate Kneser-Ney, write version 3) takes %.1f s; reading\n' "$(v compile-s)"
printf 'and parsing the same file alone %.1f s (%.1f times; medians of 3).\n' "$(v parse-s)" "$(v compile/parse)"
echo
echo "Load averages (1, 5, 15 min) at the start of each run and at the end:"
echo "$up1; $up2; $up3."
echo
echo "Commands: \`$cmd1\` (bundled corpus: sizes, parts,"
echo "scoring, open, verify, compile) and \`$cmd2\` (generated"
echo "model: scoring, open). Reproduce the section: \`bash .ci/benchmarks format\`."
