#!/usr/bin/env bash
# The C reader (spec/c) against the Go reader: per-word scoring time on the
# same model file and the same held-out words, alternating rounds, medians.
set -euo pipefail
cmd="go test ./spec/ctest -run '^\$' -bench NextCAgainstGo -benchtime 1x"
out=$(go test ./spec/ctest -run '^$' -bench NextCAgainstGo -benchtime 1x)
echo "## C reader against the Go reader"
echo
echo "Per-word scoring of running held-out text (every tenth sentence of the"
echo "bundled State of the Union text) with 5-gram Kneser-Ney models of the other"
echo "nine tenths: \`ingot_next\` (spec/c, \`cc -O2\`, timed inside a C driver)"
echo "against \`format.Model.Next\`, same file, same words, five alternating"
echo "rounds, medians. Target: C within 1.5 times Go's time, or faster."
echo
echo "| model | file | words | C ns/word | Go ns/word | C / Go |"
echo "| --- | ---: | ---: | ---: | ---: | ---: |"
printf '%s\n' "$out" | awk '/^BenchmarkNextCAgainstGo\// {
	split($1, a, "/"); name = a[2]; sub(/-[0-9]+$/, "", name)
	for (i = 3; i < NF; i++) v[$(i+1)] = $i
	printf "| %s | %.1f MiB | %d | %.0f | %.0f | %.2f |\n", name, v["MiB"], v["words"], v["c-ns/word"], v["go-ns/word"], v["c/go"]
}'
echo
echo "Load average when measured: $(cut -d' ' -f1-3 /proc/loadavg); the absolute"
echo "times move with the load, the ratio much less (both readers run in the"
echo "same rounds, alternating)."
echo
echo "Command: \`$cmd\`"
echo "(\`INGOT_BENCH_SENTENCES=N\` builds from the first N sentences only)."
