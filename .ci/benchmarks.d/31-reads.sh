#!/usr/bin/env bash
# Where format version 3's scoring time goes (issue 11): the cache lines
# Model.Next reads per word, by section, in versions 3 and 2 (the read
# hooks of format/reads_on.go, compiled in by the build tag ingotreads),
# and the cost of a step whose lines are all in cache, against the step as
# it runs, on the generated model of the format section.
# The two runs share the models through a directory: $INGOT_BENCH_CACHE
# when set (it then keeps them for later runs), a temporary one otherwise.
set -euo pipefail
if [ -n "${INGOT_BENCH_CACHE:-}" ]; then
	cache=$INGOT_BENCH_CACHE
else
	cache=$(mktemp -d)
	trap 'rm -rf "$cache"' EXIT
fi
cmd1="INGOT_BENCH_CACHE=DIR go test -tags ingotreads ./format -run '^\$' -bench 'ReadsPerWord\$' -benchtime 1x -timeout 60m"
cmd2="INGOT_BENCH_CACHE=DIR INGOT_BENCH_KEEP_V3=1 go test ./format -run '^\$' -bench 'ScoringGenerated\$' -benchtime 1x -timeout 60m"
up1=$(cut -d' ' -f1-3 /proc/loadavg)
reads=$(INGOT_BENCH_CACHE=$cache go test -tags ingotreads ./format -run '^$' -bench 'ReadsPerWord$' -benchtime 1x -timeout 60m)
up2=$(cut -d' ' -f1-3 /proc/loadavg)
score=$(INGOT_BENCH_CACHE=$cache INGOT_BENCH_KEEP_V3=1 go test ./format -run '^$' -bench 'ScoringGenerated$' -benchtime 1x -timeout 60m)
up3=$(cut -d' ' -f1-3 /proc/loadavg)
line=$(printf '%s\n' "$score" | grep '^BenchmarkScoringGenerated-')
get() { printf '%s\n' "$line" | awk -v k="$1" '{ for (i = 3; i <= NF; i++) if ($i == k) { print $(i-1); exit } }'; }
# table VERSION: "name<TAB>lines<TAB>cold" for each section the version's step read
table() {
	printf '%s\n' "$reads" | awk -v v="$1" '
		/^version / { on = ($2 == v) ; next }
		on && /^  / { n = $0; sub(/^  /, "", n); sub(/ +[0-9.]+ lines.*/, "", n); printf "%s\t%s\t%s\n", n, $(NF-3), $(NF-1) }
		on && !/^  / { on = 0 }'
}
total() { printf '%s\n' "$reads" | awk -v v="$1" -v f="$2" '/^version / && $2 == v { for (i = 1; i <= NF; i++) if ($i ~ /^lines/) l = $(i-1); else if ($i ~ /^cold/) c = $(i-1); sub(/,/, "", l); print (f == "lines" ? l : c); exit }'; }

echo "## Where version 3's scoring time goes (issue 11)"
echo
echo "Cache lines (64 bytes) of the model file that \`Model.Next\` reads per word"
echo "of the held-out text, on the 8-bit generated model of the format section"
echo "($(printf '%.1f' "$(get v3-MiB)") MiB in version 3): all distinct lines one step reads, and the cold"
echo "ones, not read within the last 2 MiB of line reads (a model of a 2 MiB"
echo "cache; a step's cold lines are the ones it waits for in memory, several at"
echo "a time when they do not depend on each other). Counted by hooks in the"
echo "readers that only a build with the tag \`ingotreads\` compiles in."
echo
echo "| section | version 3 lines | version 3 cold | version 2 lines | version 2 cold |"
echo "| --- | ---: | ---: | ---: | ---: |"
LC_ALL=C join -t $'\t' -a 1 -a 2 -e '' -o 0,1.2,1.3,2.2,2.3 <(table 3 | LC_ALL=C sort) <(table 2 | LC_ALL=C sort) |
	awk -F '\t' '{ printf "| %s | %s | %s | %s | %s |\n", $1, $2, $3, $4, $5 }'
printf '| **per word** | **%s** | **%s** | **%s** | **%s** |\n' "$(total 3 lines)" "$(total 3 cold)" "$(total 2 lines)" "$(total 2 cold)"
echo
echo "The same words scored with the lines in cache (each step run again from a"
echo "copy of its state right after it ran: the work the layout asks of the"
echo "processor) and as they run, against one dependent random access over a"
echo "buffer of the version-3 file's size (medians of five rounds):"
echo
echo "| layout | step, ns/word | step in cache, ns/word | one access, ns | step / access | in cache / access |"
echo "| --- | ---: | ---: | ---: | ---: | ---: |"
for v in v3 v2; do
	printf '| version %s | %.0f | %.0f | %.1f | %.2f | %.2f |\n' "${v#v}" "$(get $v-ns/word)" "$(get $v-cached-ns/word)" "$(get chase-ns)" \
		"$(get $v/chase)" "$(awk -v a="$(get $v-cached-ns/word)" -v c="$(get chase-ns)" 'BEGIN { print a / c }')"
done
echo
echo "Load averages (1, 5, 15 min) at the start, between the two runs and at the"
echo "end: $up1; $up2; $up3."
echo
echo "Commands (DIR: a directory that keeps the models between the two runs):"
echo "\`$cmd1\`, then \`$cmd2\`."
echo "Reproduce the section: \`bash .ci/benchmarks reads\`."
