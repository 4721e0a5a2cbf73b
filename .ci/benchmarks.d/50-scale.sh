#!/usr/bin/env bash
# Scale (issue 12): counting throughput per core, and counting within a
# small memory budget (spill runs on disk) against the unbounded run, on
# seeded synthetic text (compile/corpus/gentext; never committed). Peak
# resident memory from /usr/bin/time -v (apt-get install -y time).
set -euo pipefail
[ -x /usr/bin/time ] || { echo "40-scale: needs /usr/bin/time (apt-get install -y time)" >&2; exit 1; }
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/ingot" ./cmd/ingot
go build -o "$work/gentext" ./compile/corpus/gentext
"$work/gentext" 1 35000 50000 >"$work/text.txt"
rss() { awk '/Maximum resident/ {printf "%.0f", $NF/1024}' "$1"; }
wall() { awk '/Elapsed \(wall/ {print $NF}' "$1"; }
timed() { local log=$1; shift; /usr/bin/time -v "$@" 2>"$log" >/dev/null || { cat "$log" >&2; exit 1; }; }

timed "$work/t-full" "$work/ingot" count --order 5 --quiet -o "$work/full.bin" "$work/text.txt"
timed "$work/t-small" "$work/ingot" count --order 5 --quiet --memory 48MiB --tmp "$work" --log-level info -o "$work/small.bin" "$work/text.txt"
runs=$(grep -o 'runs=[0-9]*' "$work/t-small" | tail -1 | cut -d= -f2)
same_counts=no
cmp -s "$work/full.bin" "$work/small.bin" && same_counts=yes
ngrams=$("$work/ingot" inspect --json "$work/full.bin" | grep -o '"entries": *[0-9]*' | awk -F: '{s += $2} END {print s}')
tokens=$(wc -w <"$work/text.txt")
timed "$work/c-full" "$work/ingot" compile --method kneser-ney --order 5 -o "$work/full.ingot" "$work/full.bin"
timed "$work/c-small" "$work/ingot" compile --method kneser-ney --order 5 -o "$work/small.ingot" "$work/small.bin"
same_model=no
cmp -s "$work/full.ingot" "$work/small.ingot" && same_model=yes

# Counting throughput: medians of 3 runs of each benchmark, side by side.
bench=$(go test -run '^$' -bench '^(BenchmarkCount|BenchmarkCountAllCores|BenchmarkCounter)$' -benchtime 3x -count 3 ./compile/counts)
median() {
	printf '%s\n' "$bench" | awk -v b="$1" -v unit="$2" '$1 ~ "^"b"(-[0-9]+)?$" {for (i = 2; i < NF; i++) if ($(i+1) == unit) print $i}' |
		sort -g | awk '{v[NR] = $1} END {printf "%.0f", v[int((NR+1)/2)]}'
}
new_cpu=$(median BenchmarkCount tokens/cpu-s)
old_cpu=$(median BenchmarkCounter tokens/cpu-s)
all_wall=$(median BenchmarkCountAllCores tokens/s)
one_wall=$(median BenchmarkCount tokens/s)
old_wall=$(median BenchmarkCounter tokens/s)

echo "## Scale: counting (issue 12)"
echo
echo "Generated text: \`gentext 1 35000 50000\` (seeded Zipf words with Markov"
echo "dependencies), $tokens tokens, $ngrams distinct n-grams of orders 1 to 5."
echo
echo "| run | wall time | peak resident memory |"
echo "| --- | ---: | ---: |"
echo "| \`ingot count --order 5\` (default budget, all cores) | $(wall "$work/t-full") | $(rss "$work/t-full") MiB |"
echo "| \`ingot count --order 5 --memory 48MiB\` ($runs spill runs) | $(wall "$work/t-small") | $(rss "$work/t-small") MiB |"
echo "| \`ingot compile --method kneser-ney --order 5\` (unbounded counts) | $(wall "$work/c-full") | $(rss "$work/c-full") MiB |"
echo "| the same on the 48 MiB counts | $(wall "$work/c-small") | $(rss "$work/c-small") MiB |"
echo
echo "Counts byte-identical to the unbounded run: $same_counts; models"
echo "byte-identical: $same_model. compile does not take a memory budget yet: its"
echo "figure is for reference."
echo
echo "Counting throughput at order 5 on \`corpus.Generate(seed 1, 20000"
echo "sentences, 20000 words)\`, medians of 3 runs measured side by side in one"
echo "process (\`go test -run '^\$' -bench '^(BenchmarkCount|BenchmarkCountAllCores|BenchmarkCounter)\$' -benchtime 3x -count 3 ./compile/counts\`)."
echo "Tokens per CPU-second is the per-core figure (it does not count the time"
echo "the process waited for a shared core):"
echo
echo "| counter | tokens per CPU-second | tokens per wall-second |"
echo "| --- | ---: | ---: |"
echo "| in-memory Counter (string-keyed maps, before issue 12) | $old_cpu | $old_wall |"
echo "| Count, one worker | $new_cpu | $one_wall |"
echo "| Count, all cores | - | $all_wall |"
echo
echo "Per core: $(awk -v a="$new_cpu" -v b="$old_cpu" 'BEGIN {printf "%.2f", a/b}')x the in-memory Counter. Reproduce: \`bash .ci/benchmarks scale\`."
