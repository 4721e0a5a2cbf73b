#!/usr/bin/env bash
# Pruning to a budget: the four methods' 5-gram models of the full State of
# the Union text, pruned to 1/2, 1/4, 1/16 and 1/64 of the unpruned 8-bit
# Kneser-Ney file, 8-bit, two ways (a finished model pruned by relative
# entropy; compile --max-size from the counts). Writes the table here and the
# chart to testdata/sotu/pruning-5gram.svg (and .csv). Long: on 2 cores
# shared with other work (load 30) it took 15 minutes to reach the first
# budget; it has not yet been run to the end.
set -euo pipefail
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
INGOT_PRUNING_OUT="$work" go test -run '^$' -bench PruningPaths -benchtime 1x -timeout 3h ./compile/budget >"$work/log.txt" 2>&1 ||
	{ cat "$work/log.txt" >&2; exit 1; }
cp "$work/pruning.svg" testdata/sotu/pruning-5gram.svg
cp "$work/pruning.csv" testdata/sotu/pruning-5gram.csv

echo "## Pruning to a budget"
echo
echo "Full State of the Union text, 5-gram models, every tenth sentence held"
echo "out: the even held-out sentences choose the order (compile's"
echo "\`--heldout\`), the odd ones give every perplexity below. Budgets are"
echo "fractions of the unpruned 8-bit Kneser-Ney file; every model is 8-bit."
echo "\"prune\" is relative-entropy pruning of the finished model (\`ingot"
echo "prune --max-size B --bits 8\`); \"compile\" prunes from the counts"
echo "(\`ingot compile --max-size B --bits 8 --heldout DEV\`): ranked on a Katz"
echo "model for kneser-ney (on the model itself for the others), kneser-ney"
echo "estimated again on the survivors, the order chosen on DEV."
echo
cat "$work/pruning.md"
echo
echo "Chart: \`testdata/sotu/pruning-5gram.svg\` (one curve per method)."
echo "Reproduce: \`bash .ci/benchmarks pruning\` (this script,"
echo "\`.ci/benchmarks.d/60-pruning.sh\`), which runs"
echo "\`INGOT_PRUNING_OUT=DIR go test -run '^\$' -bench PruningPaths -benchtime 1x -timeout 3h ./compile/budget\`."
