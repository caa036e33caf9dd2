#!/bin/sh
# Fuzz the input stage with libFuzzer: sh tests/fuzz/run.sh (from the
# repository root, or anywhere: it changes to the root itself).
#
# Builds build/fuzz/fuzz_fieldbook and build/fuzz/fuzz_xml (clang,
# -fsanitize=fuzzer,address,undefined, the input-stage library sources
# compiled in), seeds build/fuzz/corpus/{fieldbook,xml} from the examples,
# projects, bad-input cases and unit-test data, then runs each harness for
# FUZZ_SECONDS seconds (default 60), one after the other, or both at once
# with FUZZ_JOBS=2. Exits non-zero when a harness finds anything; the
# reproducer is left in build/fuzz/crashes/ (crash-*, leak-*, timeout-*,
# oom-*, slow-unit-*) and the log in build/fuzz/NAME.log.
#
# Environment: FUZZ_SECONDS (60), FUZZ_JOBS (1 or 2), FUZZ_TARGETS
# ("fieldbook xml"), CLANG (clang), BUILD (build), FUZZ_ARGS (extra
# libFuzzer options).
#
# Reproduce one finding: build/fuzz/fuzz_xml build/fuzz/crashes/crash-...
# (set CAIRN_FUZZ_PRINT=1 to see the diagnostics the loader gave).
set -u
cd "$(dirname "$0")/../.." || exit 2
CLANG=${CLANG:-clang}
BUILD=${BUILD:-build}
FUZZ_SECONDS=${FUZZ_SECONDS:-60}
FUZZ_JOBS=${FUZZ_JOBS:-1}
FUZZ_TARGETS=${FUZZ_TARGETS:-fieldbook xml adjust}
FUZZ_ARGS=${FUZZ_ARGS:-}
# The harnesses chdir into their sandbox: every path they get is absolute.
case $BUILD in
/*) out=$BUILD/fuzz ;;
*) out=$(pwd)/$BUILD/fuzz ;;
esac
mkdir -p "$out/crashes" "$out/corpus/fieldbook" "$out/corpus/xml" "$out/corpus/adjust" || exit 2

if ! command -v "$CLANG" >/dev/null 2>&1; then
    echo "fuzz: $CLANG not found (libFuzzer needs clang; set CLANG=)" >&2
    exit 2
fi

# --- build ----------------------------------------------------------------
pkgs="libxml-2.0 gsl openblas lapacke nettle"
# shellcheck disable=SC2086
pkg_cflags=$(pkg-config --cflags $pkgs) || exit 2
# GSL's own CBLAS would shadow OpenBLAS (as in the Makefile).
# shellcheck disable=SC2086
pkg_libs=$(pkg-config --libs $pkgs | sed 's/-lgslcblas//g') || exit 2
cflags="-std=c11 -D_POSIX_C_SOURCE=200809L -O1 -g -fno-omit-frame-pointer \
 -fsanitize=fuzzer-no-link,address,undefined -fno-sanitize-recover=undefined \
 -Wall -Wextra -Werror -pedantic -Wshadow -Wstrict-prototypes \
 -Wmissing-prototypes -Wfloat-conversion -Wno-unused-parameter \
 -Iinclude -I/usr/include/suitesparse $pkg_cflags"
libs="$pkg_libs -lcholmod -lsuitesparseconfig -lm -pthread"
# The library sources are compiled into the harness binaries. The
# loader's own stat() and fopen() references are renamed to the sandbox
# guards of fuzz_common.c (only in these objects: libFuzzer's own file
# access is untouched).
mkdir -p "$out/obj" || exit 2
objs=""
for src in src/core/*.c src/model/*.c src/input/*.c tests/fuzz/fuzz_common.c; do
    obj=$out/obj/$(echo "$src" | tr / _ | sed 's/\.c$/.o/')
    # shellcheck disable=SC2086
    "$CLANG" $cflags -c "$src" -o "$obj" || { echo "fuzz: cannot compile $src" >&2; exit 2; }
    case $src in
    tests/fuzz/*) ;;
    *) objcopy --redefine-sym stat=cairn_fuzz_stat --redefine-sym fopen=cairn_fuzz_fopen \
           "$obj" || exit 2 ;;
    esac
    objs="$objs $obj"
done
# The whole-path harness also needs the later stages (not sandboxed: they
# open no input files but through the loader and the diagnosis, which
# re-reads the staged input by name).
aobjs=""
for src in src/solve/*.c src/quality/*.c src/output/*.c; do
    obj=$out/obj/$(echo "$src" | tr / _ | sed 's/\.c$/.o/')
    # shellcheck disable=SC2086
    "$CLANG" $cflags -c "$src" -o "$obj" || { echo "fuzz: cannot compile $src" >&2; exit 2; }
    objcopy --redefine-sym stat=cairn_fuzz_stat --redefine-sym fopen=cairn_fuzz_fopen \
        "$obj" || exit 2
    aobjs="$aobjs $obj"
done
for t in $FUZZ_TARGETS; do
    echo "fuzz: building $out/fuzz_$t"
    extra=""
    [ "$t" = adjust ] && extra=$aobjs
    # shellcheck disable=SC2086
    "$CLANG" $cflags -fsanitize=fuzzer -o "$out/fuzz_$t" "tests/fuzz/fuzz_$t.c" $objs $extra $libs \
        || { echo "fuzz: build of fuzz_$t failed" >&2; exit 2; }
done

# --- seed corpora -----------------------------------------------------------
sh tests/fuzz/seed.sh "$out/corpus" || exit 2
# the whole-path harness starts from the field books, small ones only
for f in "$out/corpus/fieldbook"/*; do
    [ -f "$f" ] && [ "$(wc -c <"$f")" -le 8192 ] && cp "$f" "$out/corpus/adjust/"
done

# --- run ----------------------------------------------------------------------
# ASan: report leaks, fail hard; UBSan: print the stack. A timeout is one
# input over 10 s; -rss_limit_mb catches excessive memory.
# The harnesses make their sandbox directories here (a crashed harness
# cannot remove its own).
rm -rf "$out/tmp" && mkdir -p "$out/tmp" || exit 2
TMPDIR=$out/tmp
export TMPDIR
ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1:abort_on_error=1:detect_stack_use_after_return=1}
UBSAN_OPTIONS=${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}
export ASAN_OPTIONS UBSAN_OPTIONS

run_one() {
    t=$1
    # shellcheck disable=SC2086
    len=65536 dict=$t
    [ "$t" = adjust ] && len=8192 dict=fieldbook
    "$out/fuzz_$t" -max_total_time="$FUZZ_SECONDS" -max_len=$len -timeout=10 \
        -rss_limit_mb=2048 -malloc_limit_mb=2048 -print_final_stats=1 \
        -artifact_prefix="$out/crashes/$t-" -dict="$(pwd)/tests/fuzz/$dict.dict" $FUZZ_ARGS \
        "$out/corpus/$t" >"$out/$t.log" 2>&1
    rc=$?
    if [ "$rc" -eq 0 ]; then
        echo "fuzz: $t: ok ($FUZZ_SECONDS s, $(grep -o 'stat::number_of_executed_units: *[0-9]*' "$out/$t.log" | grep -o '[0-9]*$') runs)"
    else
        echo "fuzz: $t: FOUND SOMETHING (status $rc), see $out/$t.log:"
        grep -E 'ERROR|SUMMARY|oracle|Test unit written' "$out/$t.log" | head -10
    fi
    return "$rc"
}

fail=0
if [ "$FUZZ_JOBS" -ge 2 ]; then
    pids=""
    for t in $FUZZ_TARGETS; do
        run_one "$t" &
        pids="$pids $!"
    done
    for p in $pids; do
        wait "$p" || fail=1
    done
else
    for t in $FUZZ_TARGETS; do
        run_one "$t" || fail=1
    done
fi
rm -rf "$out/tmp"
if [ "$fail" -ne 0 ]; then
    echo "fuzz: findings in $out/crashes/"
    exit 1
fi
echo "fuzz: no findings"
