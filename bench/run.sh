#!/bin/sh
# run.sh runs the Go benchmarks behind every speed and memory target in
# BENCHMARKS.md, each in its own test binary under /usr/bin/time -v so that
# peak RSS is measured too, and writes bench/out/go-bench.txt and a table in
# bench/out/go-bench.md. Peer comparisons are in bench/peers.sh (association
# engine against pandas and R) and bench/gram.sh (complete-data Spearman
# against numpy).
#
#   sh bench/run.sh
set -eu
cd "$(dirname "$0")/.."
OUT=bench/out
mkdir -p "$OUT"
: >"$OUT/go-bench.txt"
printf '| target | benchmark | time/op | peak RSS (MB) |\n|---|---|---|---|\n' >"$OUT/go-bench.md"

run() { # target package benchmark-regexp benchtime
	target=$1 pkg=$2 re=$3 bt=$4
	bin="$OUT/$(echo "$pkg" | tr '/.' '__').test"
	go test -c -o "$bin" "./$pkg"
	/usr/bin/time -v "$bin" -test.run '^$' -test.bench "$re" -test.benchtime "$bt" -test.benchmem \
		>"$OUT/last.txt" 2>"$OUT/last.time"
	cat "$OUT/last.txt" >>"$OUT/go-bench.txt"
	rss=$(awk -F': ' '/Maximum resident set size/{printf "%.0f", $2/1024}' "$OUT/last.time")
	awk -v t="$target" -v r="$rss" '/^Benchmark/{printf "| %s | %s | %.3f s | %s |\n", t, $1, $3/1e9, r}' "$OUT/last.txt" >>"$OUT/go-bench.md"
}

run "CSV load 5,000 × 1,000 < 3 s, < 400 MB" dataset 'BenchmarkReadCSV/5000x1000$' 3x
run "XPT read 100 MB ≥ 150 MB/s" dataset 'BenchmarkReadXPT' 3x
run "SDTM shaping" dataset 'BenchmarkShape' 3x
run "all pairs 5,000 × 1,000, < 500 MB" assoc 'BenchmarkAllPairs/n=5000/p=1000' 1x
run "clustering 1,000 variables < 1 s" cluster 'BenchmarkHierarchy' 3x
run "graph rendering < 5 s" render 'BenchmarkClusterRender' 3x
run "proposing: demo < 10 s, 5,000 × 1,000 < 60 s" rules 'BenchmarkPropose' 1x
run "checker: 200 rules, 100,000 × 1,000 < 20 s, < 2 GB" rules/check 'BenchmarkRun' 1x
run "subject distances 5,000 × 300 < 30 s, < 1 GB" signals 'BenchmarkGower/n=5000' 1x
run "demo study generation" dataset/demostudy 'BenchmarkGenerate' 3x
cat "$OUT/go-bench.md"
