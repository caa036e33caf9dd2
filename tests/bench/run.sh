#!/bin/sh
# make bench: timings live here, never in a test.
# Builds the synthetic network generator, then adjusts plane networks of
# increasing size and prints wall time and peak memory of each run.
# BENCH_SIZES overrides the sizes (default "1000 10000 20000").
set -eu
top=$(cd "$(dirname "$0")/../.." && pwd)
out=$top/build/bench
mkdir -p "$out"
cc=${CC:-gcc}
$cc -std=c11 -O2 -Wall -Wextra -o "$out/gen" "$top/tests/bench/gen.c" -lm
sizes=${BENCH_SIZES:-1000 10000 20000}
# The selected inverse against one factorisation of the same matrix.
$cc -std=c11 -O2 -I"$top/include" -I/usr/include/suitesparse \
    $(pkg-config --cflags openblas lapacke) -o "$out/selinv_bench" \
    "$top/tests/bench/selinv_bench.c" "$top/build/libcairn.a" -lcholmod -lsuitesparseconfig \
    $(pkg-config --libs openblas lapacke) -lm
for n in ${SELINV_SIZES:-10000 100000}; do "$out/selinv_bench" "$n" 3; done
echo
printf '%-8s %-10s %-10s %-10s %s\n' marks lines wall_s peak_MB exit
for n in $sizes; do
    fb=$out/plane-$n.cfb
    [ -f "$fb" ] || "$out/gen" --kind plane --marks "$n" --seed 7 -o "$fb"
    lines=$(wc -l <"$fb")
    rc=0
    /usr/bin/time -f '%e %M' -o "$out/time-$n" "$top/build/cairn" adjust "$fb" \
        -o "$out/res-$n" --quiet >"$out/log-$n" 2>&1 || rc=$?
    set -- $(tail -1 "$out/time-$n")
    printf '%-8s %-10s %-10s %-10s %s\n' "$n" "$lines" "$1" "$(($2 / 1024))" "$rc"
done
