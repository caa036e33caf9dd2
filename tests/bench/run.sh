#!/bin/sh
# make bench: timings live here, never in a test.
#
# 1. The selected inverse against one factorisation of the same matrix
#    (tests/bench/selinv_bench.c).
# 2. Whole adjustments of synthetic plane networks (tests/bench/gen.c),
#    timed phase by phase by tests/bench/phases.c, against a bare CHOLMOD
#    analyse + factorise of the same normal matrix in the same run; the
#    table goes to stdout and to tests/bench/results.md.
# BENCH_SIZES overrides the sizes (default 1000 10000 100000; BENCH_FULL=1
# adds 1000000), BENCH_KINDS the kinds of network (default plane 3d level:
# gen --kind; 3d is left out at 10^6, which would need most of a 24 GiB
# machine). SELINV_SIZES likewise for part 1.
set -eu
top=$(cd "$(dirname "$0")/../.." && pwd)
build=${BUILD:-$top/build}
out=$build/bench
mkdir -p "$out"
cc=${CC:-gcc}
libs="-lcholmod -lsuitesparseconfig $(pkg-config --libs openblas lapacke libxml-2.0 gsl nettle | sed 's/-lgslcblas//') -lm -pthread"
cflags="-std=c11 -D_POSIX_C_SOURCE=200809L -O2 -I$top/include -I/usr/include/suitesparse $(pkg-config --cflags openblas lapacke libxml-2.0)"
$cc -std=c11 -O2 -Wall -Wextra -o "$out/gen" "$top/tests/bench/gen.c" -lm
# shellcheck disable=SC2086
$cc $cflags -o "$out/selinv_bench" "$top/tests/bench/selinv_bench.c" "$build/libcairn.a" $libs
# shellcheck disable=SC2086
$cc $cflags -o "$out/phases" "$top/tests/bench/phases.c" "$build/libcairn.a" $libs

echo "== selected inverse vs one factorisation"
for n in ${SELINV_SIZES:-10000 100000}; do "$out/selinv_bench" "$n" 3; done
echo

sizes=${BENCH_SIZES:-1000 10000 100000}
[ "${BENCH_FULL:-0}" = 1 ] && sizes="$sizes 1000000"
table=$out/results.md
{
    echo "Machine: $(nproc) cores, $(awk '/MemTotal/ {printf "%.0f GiB", $2/1048576}' /proc/meminfo), $(uname -m); $(date -u +%Y-%m-%d)"
    echo "Seconds of wall time per phase; bare = CHOLMOD analyse + factorise of the same N (fresh Common, the ordering the adjustment chose: METIS for the plane and 3-D networks above 20 000 unknowns, AMD for the others and for levelling)."
    echo "snoop: iterate = the default data snooping (at alpha 0.001 about 0.1 % of the good observations fail by chance and are rejected, in rounds of one factorisation and one selected inverse each, plus one more of each at the end); flag = every observation tested once, nothing rejected."
    echo "Peak RSS: the adjustment's own peak (the yardstick's factorisation excluded)."
    echo
    echo "| network | marks | snoop | unknowns | observations | nnz(L) | load | start | build | pattern | analyse | assemble | factorise (n) | solve | quality+snooping | selinv | write | total | bare (analyse+factor) | total/bare | peak RSS MB | bare MB |"
    echo "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|"
} >"$table"
for kind in ${BENCH_KINDS:-plane 3d level}; do
    for n in $sizes; do
        [ "$kind" = 3d ] && [ "$n" -ge 1000000 ] && continue
        fb=$out/$kind-$n.cfb
        [ -f "$fb" ] || "$out/gen" --kind "$kind" --marks "$n" --seed 7 -o "$fb"
        "$out/phases" "$fb" "$out/res-$kind-$n" iterate "$kind" >>"$table"
        "$out/phases" "$fb" "$out/res-$kind-$n" flag "$kind" >>"$table"
        rm -rf "$out/res-$kind-$n"   # 5 GB of result files at 10^6 marks
    done
done
cat "$table"
cp "$table" "$top/tests/bench/results.md"
