#!/usr/bin/env bash
# Format version 3 against the tables layout (version 2): file size per
# n-gram, per-word scoring against a pointer chase over a buffer of the
# model's size (same process, same rounds, medians), open time, and full
# verification against one lookup per n-gram.
set -euo pipefail
cmd="go test ./format -run '^\$' -bench Layouts -benchtime 1x -timeout 30m"
out=$(go test ./format -run '^$' -bench Layouts -benchtime 1x -timeout 30m)
line=$(printf '%s\n' "$out" | grep '^BenchmarkLayouts')
v() { printf '%s\n' "$line" | awk -v k="$1" '{ for (i = 3; i <= NF; i++) if ($i == k) { print $(i-1); exit } }'; }
echo "## Model file layout (format version 3)"
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
echo "Scoring the held-out text word by word with \`Model.Next\` (8-bit model,"
echo "$(v words) words, five rounds, medians), against one dependent random"
echo "access over a buffer of the version-3 file's size ($(v v3-MiB) MiB),"
echo "measured in the same rounds. Target: at most 3 accesses per word."
echo
echo "| layout | ns/word | one access, ns | ratio |"
echo "| --- | ---: | ---: | ---: |"
printf '| version 3 | %.0f | %.1f | %.2f |\n' "$(v v3-ns/word)" "$(v chase-ns)" "$(v v3/chase)"
printf '| version 2 | %.0f | %.1f | %.2f |\n' "$(v v2-ns/word)" "$(v chase-ns)" "$(v v2/chase)"
echo
printf 'Open time (median of 200 opens of a mapped file): tiny golden model %.0f ns,\n' "$(v open-tiny-ns)"
printf 'this 8-bit model %.0f ns.\n' "$(v open-large-ns)"
echo
printf 'Verification of the 8-bit version-3 file: one lookup (`Model.Find`) of every\n'
printf 'n-gram in random order takes %.2f s; `Model.Verify` (structure, checksums)\n' "$(v lookups-s)"
printf '%.2f s (%.2f times); `ingot verify` (every check, normalisation\n' "$(v model-verify-s)" "$(v model-verify/lookups)"
printf 'included) %.2f s (%.2f times). Target: at most 3 times.\n' "$(v ingot-verify-s)" "$(v ingot-verify/lookups)"
echo
echo "Load average when measured: $(cut -d' ' -f1-3 /proc/loadavg)."
echo
echo "Command: \`$cmd\`"
