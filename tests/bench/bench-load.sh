#!/bin/sh
# Load benchmark: build the synthetic network generator, write a plane field
# book of about 100 000 lines, and time `cairn check` on it (load, validate,
# misclosures; no adjustment). Prints wall time and peak memory; timing is
# reported, never asserted (DEVELOPERS.md: timing lives only in make bench).
#
# Environment: CC (default gcc), BENCH_LINES (default 100000), BENCH_SEED
# (default 1). Run from anywhere (POSIX sh; make runs it with sh); paths
# are relative to the repository root.
set -eu

root=$(cd "$(dirname "$0")/../.." && pwd)
cd "$root"
out=build/bench
mkdir -p "$out"

cc=${CC:-gcc}
lines=${BENCH_LINES:-100000}
seed=${BENCH_SEED:-1}

"$cc" -std=c11 -Wall -Wextra -Werror -pedantic -Wshadow \
    -Wstrict-prototypes -Wmissing-prototypes -O2 \
    -o "$out/gen" tests/bench/gen.c -lm

# A plane field book has 6 header lines, then per mark one mark line, one
# setup line and on average 7 sight lines: about 9 lines a mark.
marks=$(( (lines - 6) / 9 ))
book="$out/load-$marks.cfb"
"$out/gen" --kind plane --marks "$marks" --seed "$seed" -o "$book" \
    --truth "$out/load-$marks.truth.csv"
printf 'field book: %s (%s marks, %s lines, %s bytes)\n' "$book" "$marks" \
    "$(wc -l < "$book" | tr -d ' ')" "$(wc -c < "$book" | tr -d ' ')"

if [ ! -x build/cairn ]; then
    echo "build/cairn not found: build it with make; skipping the load timing"
    exit 0
fi

# Results of check go beside the book, not into the source tree.
result="$out/load-check"
rm -rf "$result"
status=0
if [ -x /usr/bin/time ]; then
    /usr/bin/time -o "$out/load.time" -f '%e %M' \
        build/cairn check "$book" -o "$result" > "$out/load.log" 2>&1 ||
        status=$?
    # GNU time puts "Command exited with non-zero status N" first; the
    # last line is split into wall and RSS on purpose ('?' if missing)
    # shellcheck disable=SC2046
    set -- $(tail -n 1 "$out/load.time") '?' '?'
    printf 'cairn check: exit %d, wall %s s, peak RSS %s KiB\n' \
        "$status" "$1" "$2"
else
    # No GNU time: wall time from date(1), and no peak memory.
    t0=$(date +%s.%N)
    build/cairn check "$book" -o "$result" > "$out/load.log" 2>&1 ||
        status=$?
    t1=$(date +%s.%N)
    wall=$(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.2f", b - a }')
    printf 'cairn check: exit %d, wall %s s (no /usr/bin/time: no RSS)\n' \
        "$status" "$wall"
fi
echo "cairn output: $out/load.log"

# Exit 0 or 1 are results (1: a misclosure failed, possible by chance);
# 2 or more means cairn rejected or crashed on a well-formed book: a bug.
if [ "$status" -ge 2 ]; then
    echo "bench-load: cairn check exit $status; see $out/load.log" >&2
    tail -n 20 "$out/load.log" >&2
    exit 1
fi
