#!/usr/bin/env bash
# Interpolation (issue 15): the time of `interpolate` against a `verify` of
# the larger input, measured side by side in one loop, at half and all of
# the bundled corpus (linear time shows as a flat ns/ngram); and the
# accuracy targets on a general and a domain 5-gram model.
set -euo pipefail
load=$(cut -d' ' -f1-3 /proc/loadavg)
speed=$(go test ./compile/interpolate -run '^$' -bench 'BenchmarkInterpolate$' -benchtime 3x -timeout 60m)
accuracy=$(go test ./compile/interpolate -run '^$' -bench 'BenchmarkAdaptation$' -benchtime 1x -timeout 60m)
metric() { # metric LINE UNIT: the value printed before UNIT
	awk -v u="$2" '{for (i = 2; i <= NF; i++) if ($i == u) print $(i-1)}' <<<"$1"
}
echo "## Interpolating two 5-gram models"
echo
echo "Two 5-gram models of the same State of the Union sentences (modified"
echo "Kneser-Ney and Witten-Bell, so the union of their n-grams is either one's),"
echo "read through the format's reader, interpolated with equal weights and"
echo "written; in the same loop \`verify\` checks the Kneser-Ney input. Medians"
echo "of 3 runs each. Target: interpolate at most 10 times verify, in time linear"
echo "in the n-grams. Load average when this section started: $load."
echo
echo "| sentences | n-grams | interpolate ns/n-gram | verify ns/n-gram | interpolate / verify |"
echo "| --- | --- | --- | --- | --- |"
while read -r line; do
	n=$(sed -E 's/.*sentences=([0-9]+).*/\1/' <<<"$line")
	printf '| %s | %s | %s | %s | %s |\n' "$n" "$(metric "$line" ngrams)" "$(metric "$line" ns/ngram)" \
		"$(metric "$line" verify-ns/ngram)" "$(metric "$line" x_verify)"
done < <(grep '^BenchmarkInterpolate/' <<<"$speed")
echo
echo "Command: \`go test ./compile/interpolate -run '^\$' -bench 'BenchmarkInterpolate\$' -benchtime 3x\`"
echo
line=$(grep '^BenchmarkAdaptation' <<<"$accuracy")
echo "Accuracy (order 5): a general model of every sentence but the last 6,000,"
echo "a domain model of nine tenths of those, weights fitted by EM on 300"
echo "held-out domain sentences, perplexities on 300 others."
echo
echo "| figure | value | target |"
echo "| --- | --- | --- |"
echo "| EM weight of the general model | $(metric "$line" em_weight) | |"
echo "| optimum by golden-section search | $(metric "$line" search_weight) | |"
echo "| difference | $(metric "$line" weight_gap) | at most 0.02 |"
echo "| perplexity: general, domain | $(metric "$line" general_ppl), $(metric "$line" domain_ppl) | |"
echo "| perplexity: exact mixture | $(metric "$line" mixture_ppl) | |"
echo "| perplexity: written back-off model | $(metric "$line" written_ppl) | |"
echo "| written against mixture | $(metric "$line" written_vs_mixture_%) % | within 2 % |"
echo
echo "Command: \`go test ./compile/interpolate -run '^\$' -bench 'BenchmarkAdaptation\$' -benchtime 1x\`"
