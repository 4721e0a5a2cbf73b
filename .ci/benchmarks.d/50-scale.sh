#!/usr/bin/env bash
# Scale (issue 12): counting throughput per core, counting and compiling
# within a small memory budget (spill runs, sorted passes on disk) against
# the unbounded runs, and compile time against decoding its counts, on
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
ngrams=$("$work/ingot" inspect --json "$work/full.bin" | grep -o '"ngrams_per_order":\[[0-9,]*\]' | tr -dc '0-9,' | awk -F, '{for (i = 1; i <= NF; i++) s += $i} END {print s}')
tokens=$(wc -w <"$work/text.txt")
timed "$work/c-full" "$work/ingot" compile --method kneser-ney --order 5 -o "$work/full.ingot" "$work/full.bin"
timed "$work/c-small" "$work/ingot" compile --method kneser-ney --order 5 --memory 48MiB --tmp "$work" --log-level info -o "$work/small.ingot" "$work/small.bin"
sorts=$(grep -c 'sorted on disk' "$work/c-small" || true)
# The models record their command lines (provenance), which differ; every
# other section must be the same: kind, order, encoding, length, CRC-32C.
sections() { "$work/ingot" inspect --json "$1" | grep -o '{"index":[^}]*}' | grep -v '"build info"' | sed 's/"offset":[0-9]*,//'; }
same_model=no
[ "$(sections "$work/full.ingot")" = "$(sections "$work/small.ingot")" ] && same_model=yes

# Compile against reading its counts: medians of 3 runs, side by side.
cbench=$(go test -run '^$' -bench '^(BenchmarkDecodeCounts|BenchmarkCompileOnDisk|BenchmarkCompileInMemory)$' -benchtime 2x -count 3 ./compile/bounded)
cmedian() {
	printf '%s\n' "$cbench" | awk -v b="$1" '$1 ~ "^"b"(-[0-9]+)?$" {for (i = 2; i < NF; i++) if ($(i+1) == "ns/op") print $i}' |
		sort -g | awk '{v[NR] = $1} END {printf "%.0f", v[int((NR+1)/2)]}'
}
decode_ns=$(cmedian BenchmarkDecodeCounts)
disk_ns=$(cmedian BenchmarkCompileOnDisk)
mem_ns=$(cmedian BenchmarkCompileInMemory)

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

echo "## Scale: counting and compiling within a budget (issue 12)"
echo
echo "Generated text: \`gentext 1 35000 50000\` (seeded Zipf words with Markov"
echo "dependencies), $tokens tokens, $ngrams distinct n-grams of orders 1 to 5."
echo
echo "| run | wall time | peak resident memory |"
echo "| --- | ---: | ---: |"
echo "| \`ingot count --order 5\` (default budget, all cores) | $(wall "$work/t-full") | $(rss "$work/t-full") MiB |"
echo "| \`ingot count --order 5 --memory 48MiB\` ($runs spill runs) | $(wall "$work/t-small") | $(rss "$work/t-small") MiB |"
echo "| \`ingot compile --method kneser-ney --order 5\` (unbounded counts) | $(wall "$work/c-full") | $(rss "$work/c-full") MiB |"
echo "| \`ingot compile --method kneser-ney --order 5 --memory 48MiB\` on the 48 MiB counts (in sorted passes, $sorts sorts spilled) | $(wall "$work/c-small") | $(rss "$work/c-small") MiB |"
echo
echo "Counts byte-identical to the unbounded run: $same_counts. Models identical"
echo "section by section (every section but the build information, which records"
echo "each command line): $same_model."
echo
echo "Compile time against the time to read and decode its input counts"
echo "(checksums, zstd, varints), Kneser-Ney order 5 on \`corpus.Generate(seed 1,"
echo "20000 sentences, 20000 words)\`, medians of 3 runs side by side in one process"
echo "(\`go test -run '^\$' -bench '^(BenchmarkDecodeCounts|BenchmarkCompileOnDisk|BenchmarkCompileInMemory)\$' -benchtime 2x -count 3 ./compile/bounded\`):"
echo
echo "| step | time per run | ratio to decoding |"
echo "| --- | ---: | ---: |"
echo "| read and decode the counts | $(awk -v n="$decode_ns" 'BEGIN {printf "%.2f s", n / 1e9}') | 1 |"
echo "| compile on disk (\`--memory 48MiB\`: spool, sorted passes, streamed writer) | $(awk -v n="$disk_ns" 'BEGIN {printf "%.2f s", n / 1e9}') | $(awk -v a="$disk_ns" -v b="$decode_ns" 'BEGIN {printf "%.1f", a / b}') |"
echo "| compile in memory (load, estimate, write) | $(awk -v n="$mem_ns" 'BEGIN {printf "%.2f s", n / 1e9}') | $(awk -v a="$mem_ns" -v b="$decode_ns" 'BEGIN {printf "%.1f", a / b}') |"
echo
echo "The target is at most 4; it does not hold. What the time goes to: every"
echo "order is decoded about six times (spooling, the count of counts, the suffix"
echo "sorts, the estimation pass, the walk that hands the order below to the"
echo "writer) and sorted up to three times (Kneser-Ney suffixes, the suffix join and"
echo "its way back), by a comparison sort of fixed-width records; the in-memory"
echo "path builds string-free tables but still sorts and searches every order."
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
echo "Per core: $(awk -v a="$new_cpu" -v b="$old_cpu" 'BEGIN {printf "%.2f", a/b}')x the in-memory Counter. Reproduce: \`bash .ci/benchmarks 50-scale\`."
