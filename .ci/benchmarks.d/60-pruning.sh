#!/usr/bin/env bash
# Pruning to a budget: the four methods' 5-gram models of the full State of
# the Union text, pruned to 1/2, 1/4, 1/16 and 1/64 of the unpruned 8-bit
# Kneser-Ney file, 8-bit, two ways (a finished model pruned by relative
# entropy; compile --max-size from the counts). Writes the tables here and
# the chart to testdata/sotu/pruning-5gram.svg (and .csv).
set -euo pipefail
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
began=$(date +%s)
load=$(cut -d' ' -f1-3 /proc/loadavg)
INGOT_PRUNING_OUT="$work" go test -run '^$' -bench PruningPaths -benchtime 1x -timeout 3h ./compile/budget >"$work/log.txt" 2>&1 ||
	{ cat "$work/log.txt" >&2; exit 1; }
took=$(( $(date +%s) - began ))
cp "$work/pruning.svg" testdata/sotu/pruning-5gram.svg
cp "$work/pruning.csv" testdata/sotu/pruning-5gram.csv

echo "## Pruning to a budget"
echo
echo "Full State of the Union text, 5-gram models, every tenth sentence held"
echo "out: the even held-out sentences (DEV) choose the order (compile's"
echo "\`--heldout\`), the odd ones (TEST) give every perplexity below. Budgets"
echo "are fractions of the unpruned 8-bit Kneser-Ney file; every model is"
echo "8-bit (least-squares codebooks) and every pruned file passed verify"
echo "(ingot verify's checks). \"prune\" is relative-entropy pruning of the"
echo "finished model (\`ingot prune --max-size B --bits 8\`); \"compile\" prunes"
echo "from the counts (\`ingot compile --max-size B --bits 8 --heldout DEV\`):"
echo "ranked on a Katz model for kneser-ney (on the model itself for the"
echo "others), kneser-ney estimated again on the survivors (its unigrams"
echo "interpolated or backed off, both compared), orders 2 to 5 compared on"
echo "DEV before quantization and the best one written (the form chosen is"
echo "in the log). Held-out perplexity on TEST (\`<unk>\` predictions"
echo "included; the per-model table also gives it without them); the lowest of each budget in bold."
echo
cat "$work/pruning.md"
echo
echo "Chart: \`testdata/sotu/pruning-5gram.svg\` (one curve per method, from"
echo "the counts; kneser-ney pruned as a finished model dashed)."
echo "The whole run took ${took} s (load average ${load} at its start, on a"
echo "machine shared with other work)."
echo "Reproduce: \`bash .ci/benchmarks pruning\` (this script,"
echo "\`.ci/benchmarks.d/60-pruning.sh\`), which runs"
echo "\`INGOT_PRUNING_OUT=DIR go test -run '^\$' -bench PruningPaths -benchtime 1x -timeout 3h ./compile/budget\`."
