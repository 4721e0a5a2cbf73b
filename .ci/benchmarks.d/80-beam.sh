#!/usr/bin/env bash
# Counting on Apache Beam: the pipeline of cmd/ingot-beam on the in-process
# Prism runner against the counter of 'ingot count', in one process, on the
# whole bundled corpus at order 5.
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
echo "The whole bundled corpus (1.79 M words of text, split in four files) counted"
echo "at order 5, three runs, medians; both counters run in the same process."
echo
echo "| figure | value |"
echo "| --- | ---: |"
printf '| ingot count (its counter), words of text per second | %.0f |\n' "$(med count-words/s)"
printf '| pipeline on the Prism runner, words of text per second | %.0f |\n' "$(med pipeline-words/s)"
printf '| pipeline time / count time | %.2f |\n' "$(med pipeline/count)"
printf '| bytes handed to the shuffle per byte of input text | %.2f |\n' "$(med shuffle-bytes/input-byte)"
echo
echo "Command: \`cd cmd/ingot-beam && $cmd\`."
