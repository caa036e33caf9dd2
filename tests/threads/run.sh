#!/bin/sh
# make check-threads: the CLI built with ThreadSanitizer adjusts a network
# large enough for every loop that uses several cores to run in parts
# (src/core/parallel.c: at least 20 000 observations a part; 3 500 marks
# give about 49 000 observations) and for the result files to be written
# on two threads (src/output/jobs.c). Any data race TSan sees in our code
# fails the test. OpenBLAS and libgomp are suppressed (tsan.supp).
# usage: run.sh TSAN_CAIRN BUILD_DIR
set -u
here=$(cd "$(dirname "$0")" && pwd)
cairn=$1
out=$2
mkdir -p "$out"
cc=${CC:-gcc}
$cc -std=c11 -O2 -o "$out/gen" "$here/../bench/gen.c" -lm || exit 1
"$out/gen" --kind plane --marks 3500 --seed 11 -o "$out/threads.cfb" >/dev/null || exit 1
rm -rf "$out/results"
# Some kernels (vm.mmap_rnd_bits above 28) map memory where gcc 12's TSan
# runtime cannot work ("unexpected memory mapping"); without address space
# randomisation (setarch -R) it can. If it cannot run at all, say so.
run=""
if "$cairn" --version 2>&1 | grep -q "FATAL: ThreadSanitizer"; then
    run="setarch $(uname -m) -R"
    if $run "$cairn" --version 2>&1 | grep -q "FATAL: ThreadSanitizer"; then
        echo "skip threads: ThreadSanitizer cannot run on this kernel ($(uname -r))"
        exit 0
    fi
fi
TSAN_OPTIONS="halt_on_error=1 exitcode=66 suppressions=$here/tsan.supp" \
    $run "$cairn" adjust "$out/threads.cfb" -o "$out/results" --quiet >"$out/log" 2>&1
rc=$?
if grep -q "WARNING: ThreadSanitizer" "$out/log" || [ $rc -gt 1 ]; then
    echo "FAIL threads: exit $rc"
    grep -A20 "WARNING: ThreadSanitizer" "$out/log" | head -40
    exit 1
fi
n=$(grep -c '<observation ' "$out/results/results.xml")
if [ "$n" -lt 40000 ]; then
    echo "FAIL threads: only $n observations, too few for the loops to run in parts"
    exit 1
fi
echo "ok   threads: $n observations adjusted under ThreadSanitizer, no data race (exit $rc)"
