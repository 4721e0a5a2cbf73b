#!/usr/bin/env bash
# Scoring on a model well above the caches (issue 11's speed target is for
# models of 32 MB and up): the 8-bit 5-gram Kneser-Ney model of 750,000
# generated sentences, version 3 and version 2, against one dependent random
# access over a buffer of the version-3 file's size, in the same run.
# Building the model takes about 4 minutes and 5.8 GiB of memory; with
# INGOT_BENCH_CACHE=DIR the models are kept in DIR and built once.
set -euo pipefail
cmd="go test ./format -run '^\$' -bench 'ScoringGeneratedLarge\$' -benchtime 1x -timeout 60m"
load0=$(cut -d' ' -f1-3 /proc/loadavg)
out=$(go test ./format -run '^$' -bench 'ScoringGeneratedLarge$' -benchtime 1x -timeout 60m)
line=$(printf '%s\n' "$out" | grep '^BenchmarkScoringGeneratedLarge')
v() { printf '%s\n' "$line" | awk -v k="$1" '{ for (i = 3; i < NF; i++) if ($(i+1) == k) print $i }'; }
echo "## Scoring a model larger than the caches (issue 11)"
echo
echo "The 8-bit 5-gram Kneser-Ney model of \`corpus.Generate\` (seed 1, 750,000"
echo "sentences, 50,000 words; every tenth sentence held out): $(v ngrams) n-grams,"
printf '%.1f MiB in version 3 (%.3f bytes per n-gram). Held-out text scored word by\n' "$(v v3-MiB)" "$(v v3-bytes/ngram)"
echo "word with \`Model.Next\` ($(v words) words), against one dependent random access"
echo "over a buffer of the version-3 file's size (a pointer chase), measured in"
echo "the same run; \"in cache\" runs each step again from a copy of its state"
echo "right after it ran. Target: at most 3 accesses per word."
echo
echo "| layout | ns/word | in cache, ns/word | one access, ns | ratio | in cache / access |"
echo "| --- | ---: | ---: | ---: | ---: | ---: |"
awk -v a="$(v v3-ns/word)" -v c="$(v v3-cached-ns/word)" -v x="$(v chase-ns)" 'BEGIN { printf "| version 3 | %.0f | %.0f | %.1f | %.2f | %.2f |\n", a, c, x, a / x, c / x }'
awk -v a="$(v v2-ns/word)" -v c="$(v v2-cached-ns/word)" -v x="$(v chase-ns)" 'BEGIN { printf "| version 2 | %.0f | %.0f | %.1f | %.2f | %.2f |\n", a, c, x, a / x, c / x }'
echo
echo "Load averages (1, 5, 15 min) at the start and at the end: $load0; $(cut -d' ' -f1-3 /proc/loadavg)."
echo
echo "Command: \`INGOT_BENCH_CACHE=DIR $cmd\`. Reproduce the section:"
echo "\`bash .ci/benchmarks scoring-large\` (\`INGOT_BENCH_CACHE=DIR\` keeps the models)."
