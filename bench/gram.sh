#!/bin/sh
# gram.sh times the complete-data Spearman step, ranks then one Gram matrix of
# ranks, on 5,000 rows × 1,000 complete numeric columns, in one run:
#   (a) pure Go (gonum)        go test ./assoc -run '^$' -bench GramComplete -benchtime 3x -count 3
#   (b) Go + OpenBLAS (cgo)    the same with -tags openblas, once with the
#                              environment as it is and once with
#                              OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE unset
#   (c) numpy + OpenBLAS       bench/gram_numpy.py (scipy rankdata, r.T @ r),
#                              with those two variables unset
#   (d) (a), (b) unset and (c) again on one thread (go test -cpu 1,
#       OPENBLAS_NUM_THREADS=1): with no threads waiting on each other, these
#       times move least when other work shares the machine
# and writes bench/out/gram.md with the times and the ratios to numpy.
#
#   sh bench/gram.sh              # needs libopenblas-dev (apt-get install -y libopenblas-dev)
#   REPS=5 COUNT=5 sh bench/gram.sh
#   ONE_THREAD=0 sh bench/gram.sh # skip (d)
#   REPORT_ONLY=1 sh bench/gram.sh  # rewrite gram.md from the last run's raw output
#
# Both sides rank the same matrix (splitmix64 cells, see assoc/gram_test.go).
# "product" is the Gram matrix alone (BenchmarkGramCompleteSyrk; numpy's
# r.T @ r); "rank + product" adds the ranking (BenchmarkGramCompleteRanked:
# the engine's per-column prepare, then gramOfComplete; numpy: rankdata,
# centring, r.T @ r and scaling to rho). Go reports the mean of REPS
# iterations, COUNT times; numpy the same, COUNT batches of REPS. The table
# gives the best and the median of those COUNT means, and process CPU seconds
# (every thread) per operation, steadier than wall time on a shared machine.
set -eu
cd "$(dirname "$0")/.."
REPS=${REPS:-3}
COUNT=${COUNT:-3}
ONE_THREAD=${ONE_THREAD:-1}
OUT=bench/out
mkdir -p "$OUT"
PY=/usr/bin/python3
SIZE=n=5000/p=1000

load() { cut -d' ' -f1-3 /proc/loadavg; }
LOAD0=$(load)

if [ ! -f /usr/include/x86_64-linux-gnu/openblas-pthread/cblas.h ] && [ ! -f /usr/include/openblas/cblas.h ]; then
	echo "gram.sh: OpenBLAS headers not found: apt-get install -y libopenblas-dev" >&2
	exit 2
fi

if [ "${REPORT_ONLY:-0}" = 1 ]; then
	echo "gram.sh: REPORT_ONLY=1: reusing the raw output in $OUT" >&2
	LOAD0=$(sed -n 1p "$OUT/gram_load.txt" 2>/dev/null || echo "?") LOAD1=$(sed -n 2p "$OUT/gram_load.txt" 2>/dev/null || echo "?")
	[ -s "$OUT/gram_go_1t.txt" ] || ONE_THREAD=0
else
	GOBENCH="-run ^\$ -bench GramComplete -benchtime ${REPS}x -count $COUNT"
	echo "gram.sh: (a) pure Go" >&2
	go test ./assoc $GOBENCH >"$OUT/gram_go.txt"
	echo "gram.sh: (b) Go + OpenBLAS, environment as is" >&2
	go test -tags openblas ./assoc $GOBENCH >"$OUT/gram_openblas.txt"
	echo "gram.sh: (b) Go + OpenBLAS, OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE unset" >&2
	env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE go test -tags openblas ./assoc $GOBENCH >"$OUT/gram_openblas_unset.txt"
	echo "gram.sh: (c) numpy + OpenBLAS, OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE unset" >&2
	env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE $PY bench/gram_numpy.py --rows 5000 --cols 1000 \
		--reps "$REPS" --batches "$COUNT" >"$OUT/gram_numpy.txt"
	rm -f "$OUT/gram_go_1t.txt" "$OUT/gram_openblas_unset_1t.txt" "$OUT/gram_numpy_1t.txt"
	if [ "$ONE_THREAD" = 1 ]; then
		echo "gram.sh: (d) one thread: pure Go, Go + OpenBLAS, numpy" >&2
		GOBENCH1="-run ^\$ -bench GramComplete(Syrk|Ranked)/$SIZE -benchtime ${REPS}x -count $COUNT -cpu 1"
		go test ./assoc $GOBENCH1 >"$OUT/gram_go_1t.txt"
		env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE OPENBLAS_NUM_THREADS=1 go test -tags openblas ./assoc $GOBENCH1 >"$OUT/gram_openblas_unset_1t.txt"
		env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE OPENBLAS_NUM_THREADS=1 $PY bench/gram_numpy.py --rows 5000 --cols 1000 \
			--reps "$REPS" --batches "$COUNT" >"$OUT/gram_numpy_1t.txt"
	fi
	LOAD1=$(load)
	printf '%s\n%s\n' "$LOAD0" "$LOAD1" >"$OUT/gram_load.txt"
fi

# stats FILE BENCH UNIT: "best median" of UNIT over the COUNT lines of BENCH
# in go test output (best = smallest, or largest for GFLOP/s). With -cpu 1 the
# benchmark name has no -N suffix.
stats() {
	awk -v b="$2" -v u="$3" '
	$1 == b || index($1, b "-") == 1 { for (i = 3; i < NF; i++) if ($(i+1) == u) v[n++] = (u == "ns/op" ? $i / 1e9 : $i) }
	END { if (n == 0) { print "? ?"; exit }
		for (i = 1; i < n; i++) for (j = i; j > 0 && v[j-1] > v[j]; j--) { t = v[j]; v[j] = v[j-1]; v[j-1] = t }
		best = (u == "GFLOP/s" ? v[n-1] : v[0])
		printf "%.3f %.3f\n", best, (n % 2 ? v[(n-1)/2] : (v[n/2-1] + v[n/2]) / 2) }' "$1"
}
# npstats FILE KEY: "best median" of the numpy batch means of KEY.
npstats() {
	awk -v k="$2" '$1 == k { n = NF - 1; for (i = 2; i <= NF; i++) v[i-2] = $i
		for (i = 1; i < n; i++) for (j = i; j > 0 && v[j-1] > v[j]; j--) { t = v[j]; v[j] = v[j-1]; v[j-1] = t }
		printf "%.3f %.3f\n", v[0], (n % 2 ? v[(n-1)/2] : (v[n/2-1] + v[n/2]) / 2) }' "$1"
}
first() { echo "$1" | cut -d' ' -f1; }
second() { echo "$1" | cut -d' ' -f2; }
ratio() { awk -v a="$1" -v b="$2" 'BEGIN { if (a + 0 > 0 && b + 0 > 0) printf "%.2f", a / b; else print "?" }'; }
gflops() { awk -v t="$1" 'BEGIN { if (t + 0 > 0) printf "%.1f", 5000 * 1000 * 1001 / t / 1e9; else print "?" }'; }

# rate T: the GFLOP/s column, for the product tables only (FLOPCOL=1).
rate() { if [ "$FLOPCOL" = 1 ]; then echo " $(gflops "$1") |"; fi; }
# gorow LABEL FILE BENCH: one Go table row; sets W (wall best), M (median), C (CPU median).
gorow() {
	w=$(stats "$2" "$3/$SIZE" ns/op)
	c=$(stats "$2" "$3/$SIZE" cpu-s/op)
	W=$(first "$w") M=$(second "$w") C=$(second "$c")
	echo "| $1 | $W | $M | $C |$(rate "$W")"
}
# nprow LABEL FILE KEY: the numpy row; sets NW, NM, NC.
nprow() {
	w=$(npstats "$2" "$3_wall_s")
	c=$(npstats "$2" "$3_cpu_s")
	NW=$(first "$w") NM=$(second "$w") NC=$(second "$c")
	echo "| $1 | $NW | $NM | $NC |$(rate "$NW")"
}
# table TITLE GOBENCH NPKEY NPLABEL PUREFILE OBFILE OBASISFILE NPFILE: one
# table with the ratios to numpy below it (OBASISFILE may be "-").
table() {
	echo "### $1"
	echo
	FLOPCOL=0
	if [ "$3" = product ]; then
		FLOPCOL=1
		echo "| engine | wall best | wall median | CPU median | GFLOP/s |"
		echo "|---|---:|---:|---:|---:|"
	else
		echo "| engine | wall best | wall median | CPU median |"
		echo "|---|---:|---:|---:|"
	fi
	gorow "(a) Go, gonum (pure Go)" "$5" "$2"
	GW=$W GM=$M GC=$C
	if [ "$7" != - ]; then
		gorow "(b) Go + OpenBLAS, environment as is" "$7" "$2"
	fi
	gorow "(b) Go + OpenBLAS, both variables unset" "$6" "$2"
	OW=$W OM=$M OC=$C
	nprow "(c) numpy + OpenBLAS, $4" "$8" "$3"
	echo
	echo "Ratio to numpy, best wall / median wall / median CPU: Go + OpenBLAS (both unset)"
	echo "**$(ratio "$OW" "$NW")** / $(ratio "$OM" "$NM") / $(ratio "$OC" "$NC"); pure Go"
	echo "$(ratio "$GW" "$NW") / $(ratio "$GM" "$NM") / $(ratio "$GC" "$NC")."
	echo
}

NP_BLAS=$(awk '$1 == "blas" { $1 = ""; print }' "$OUT/gram_numpy.txt")
NP_VER=$(awk '$1 == "numpy" || $1 == "scipy" { printf "%s%s %s", sep, $1, $2; sep = ", " }' "$OUT/gram_numpy.txt")
ALT=$(update-alternatives --query libblas.so.3-x86_64-linux-gnu 2>/dev/null | awk '$1 == "Value:" { print $2 }')
OB_VER=$(dpkg-query -W -f '${Version}' libopenblas-dev 2>/dev/null || echo "?")
CHECK=$(awk '$1 == "check_max_abs_diff_vs_spearmanr" { print $2 }' "$OUT/gram_numpy.txt")
PRODUCT="Product: the 1,000 × 1,000 Gram matrix of ranks"
WHOLE="Rank + product: the whole complete-data step"
NPWHOLE="rankdata + \`r.T @ r\` + scaling"

{
	echo "# Complete-data Spearman, 5,000 × 1,000: ranks, then one Gram matrix"
	echo
	echo "Written by \`sh bench/gram.sh\` (REPS=$REPS, COUNT=$COUNT) on $(date -u +%Y-%m-%d), $(nproc) cores"
	echo "($(awk -F': ' '/^model name/ { print $2; exit }' /proc/cpuinfo)), $(go version | cut -d' ' -f3)."
	echo "Load average (1, 5, 15 min) before: $LOAD0; after: $LOAD1. Other work on the"
	echo "machine inflates wall times, and with two threads also CPU times (an OpenBLAS"
	echo "thread spins while it waits for a descheduled partner); the one-thread tables"
	echo "are the steadiest. CPU is the process's user + system seconds per operation,"
	echo "every thread (getrusage in Go, time.process_time in Python)."
	echo
	echo "- (a) \`go test ./assoc -run '^\$' -bench GramComplete -benchtime ${REPS}x -count $COUNT\`"
	echo "- (b) the same with \`-tags openblas\` (cgo, \`cblas_dsyrk\`, libopenblas-dev $OB_VER),"
	echo "  with the environment as it is (OPENBLAS_CORETYPE=${OPENBLAS_CORETYPE:-unset},"
	echo "  OPENBLAS_L2_SIZE=${OPENBLAS_L2_SIZE:-unset}) and with both unset"
	echo "- (c) \`env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE $PY bench/gram_numpy.py --reps $REPS --batches $COUNT\`:"
	echo "  $NP_VER; BLAS (threadpoolctl):$NP_BLAS; libblas.so.3 → $ALT;"
	echo "  its ρ agree with scipy.stats.spearmanr to $CHECK"
	if [ "$ONE_THREAD" = 1 ]; then
		echo "- (d) one thread: (a) and (b, both unset) with \`-bench 'GramComplete(Syrk|Ranked)/$SIZE' -cpu 1\`,"
		echo "  (b) and (c) with OPENBLAS_NUM_THREADS=1"
	fi
	echo
	echo "Seconds per operation: best and median of $COUNT means of $REPS; GFLOP/s (product"
	echo "tables) from the best wall time, counting a dsyrk as n·p·(p+1) flops."
	echo
	echo "## Two threads (GOMAXPROCS=$(nproc), OpenBLAS default)"
	echo
	table "$PRODUCT" BenchmarkGramCompleteSyrk product "\`r.T @ r\`" \
		"$OUT/gram_go.txt" "$OUT/gram_openblas_unset.txt" "$OUT/gram_openblas.txt" "$OUT/gram_numpy.txt"
	table "$WHOLE" BenchmarkGramCompleteRanked total "$NPWHOLE" \
		"$OUT/gram_go.txt" "$OUT/gram_openblas_unset.txt" "$OUT/gram_openblas.txt" "$OUT/gram_numpy.txt"
	if [ "$ONE_THREAD" = 1 ]; then
		echo "## One thread (go test -cpu 1, OPENBLAS_NUM_THREADS=1)"
		echo
		table "$PRODUCT" BenchmarkGramCompleteSyrk product "\`r.T @ r\`" \
			"$OUT/gram_go_1t.txt" "$OUT/gram_openblas_unset_1t.txt" - "$OUT/gram_numpy_1t.txt"
		table "$WHOLE" BenchmarkGramCompleteRanked total "$NPWHOLE" \
			"$OUT/gram_go_1t.txt" "$OUT/gram_openblas_unset_1t.txt" - "$OUT/gram_numpy_1t.txt"
	fi
	echo "Raw output in bench/out: gram_go.txt, gram_openblas.txt, gram_openblas_unset.txt, gram_numpy.txt"
	if [ "$ONE_THREAD" = 1 ]; then
		echo "and, one thread, gram_go_1t.txt, gram_openblas_unset_1t.txt, gram_numpy_1t.txt."
	else
		echo "(one-thread runs skipped: ONE_THREAD=0)."
	fi
} >"$OUT/gram.md"
cat "$OUT/gram.md"
