#!/usr/bin/env bash
# Counting on Apache Beam: the pipeline of cmd/ingot-beam on the in-process
# Prism runner against the counter of 'ingot count', in one process, on the
# first 8,000 sentences of the bundled corpus at order 5 (Prism keeps a
# stage's elements in memory: the whole corpus needs over 12 GB).
set -euo pipefail
cd "$(dirname "$0")/../../cmd/ingot-beam"
cmd="go test -run '^\$' -bench PipelineAgainstCount -benchtime 1x -count 3 ./beamcount"
out=$(eval "$cmd")
med() { # median of one metric over the runs
	printf '%s\n' "$out" | awk -v u="$1" '/^Benchmark/ {for (i = 3; i < NF; i++) if ($(i+1) == u) print $i}' |
		sort -g | awk '{v[NR] = $1} END {print v[int((NR + 1) / 2)]}'
}
echo "## Counting on Apache Beam"
echo
echo "The first 8,000 sentences of the bundled corpus (split in four files) counted"
echo "at order 5, three runs, medians; both counters run in the same process. The"
echo "local Prism runner holds a stage's elements in memory, so the whole corpus"
echo "(1.79 M words) needed over 12 GB and was stopped after 23 minutes."
echo
echo "| figure | value |"
echo "| --- | ---: |"
printf '| ingot count (its counter), words of text per second | %.0f |\n' "$(med count-words/s)"
printf '| pipeline on the Prism runner, words of text per second | %.0f |\n' "$(med pipeline-words/s)"
printf '| pipeline time / count time | %.2f |\n' "$(med pipeline/count)"
printf '| bytes handed to the shuffle per byte of input text | %.2f |\n' "$(med shuffle-bytes/input-byte)"
echo
echo "Command: \`cd cmd/ingot-beam && $cmd\`."
