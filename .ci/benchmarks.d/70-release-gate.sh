#!/usr/bin/env bash
# The release gate (verify --baseline OLD --heldout TEXT): its whole time on
# the full bundled corpus and on a generated 100,000-word vocabulary, and
# the divergence against the former whole-vocabulary computation side by
# side. About 20 minutes on 2 shared cores.
set -euo pipefail
load=$(cut -d' ' -f1-3 /proc/loadavg)
out=$(go test ./verify/gate -run '^$' -bench 'BenchmarkReleaseGate' -benchtime 1x -timeout 90m)
end=$(cut -d' ' -f1-3 /proc/loadavg)
metric() { # metric LINE UNIT: the value printed before UNIT
	awk -v u="$2" '{for (i = 2; i <= NF; i++) if ($i == u) print $(i-1)}' <<<"$1"
}
echo "## The release gate"
echo
echo "\`ingot verify MODEL --baseline OLD --heldout TEXT\` scores the held-out"
echo "text with both models, compares their n-grams and takes the KL divergence"
echo "at every prediction, in time linear in the stored n-grams each prediction"
echo "touches. Baseline: modified Kneser-Ney of order N; candidate: order N-1"
echo "from the same counts. The last column is the divergence alone against the"
echo "former computation over the whole vocabularies, on the same 20 sentences"
echo "in the same process. One run each, wall time; load average when this"
echo "section started: $load; when its run ended: $end (the machine's 2 cores"
echo "are shared: at a load of 20 a run gets about a tenth of a core)."
echo
echo "| text | order | words | held-out sentences | whole gate | divergence, times faster |"
echo "| --- | --- | ---: | ---: | ---: | ---: |"
while read -r line; do
	case "$line" in
	*sotu-5gram*) name="State of the Union, full (every tenth sentence held out)"; order=5 ;;
	*) name="generated, 100,000-word vocabulary (seed 1)"; order=3 ;;
	esac
	secs=$(awk -v ns="$(metric "$line" ns/op)" 'BEGIN { printf "%.1f s", ns / 1e9 }')
	printf '| %s | %s | %s | %s | %s | %s |\n' "$name" "$order" "$(metric "$line" words)" \
		"$(metric "$line" sentences)" "$secs" "$(metric "$line" x-faster-than-whole-vocabulary)"
done < <(grep '^BenchmarkReleaseGate/' <<<"$out")
echo
echo "Command: \`go test ./verify/gate -run '^\$' -bench BenchmarkReleaseGate -benchtime 1x\`"
