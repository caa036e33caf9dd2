#!/bin/sh
# Textbook examples: adjust every textbook/NAME.cfb with cairn and compare
# the result files with textbook/NAME.expected (published [V] or derived [D]
# values, each with the tolerance of its printed rounding).  See
# textbook/README.md for the sources and for what is published vs derived.
#
# Environment:
#   CAIRN    the cairn binary (default ../../build/cairn beside this script)
#   PYTHON   a python3 (default /usr/bin/python3)
#   TEXTBOOK_SOLVER=reference  run tests/reference/cairn_ref.py instead of
#            cairn (to check the examples and this script without the binary)
# Exit status: 0 all agree; 1 a mismatch, a missing result, or cairn failed.
set -u
here=$(cd "$(dirname "$0")" && pwd)
CAIRN=${CAIRN:-$here/../../build/cairn}
PYTHON=${PYTHON:-/usr/bin/python3}
SOLVER=${TEXTBOOK_SOLVER:-cairn}
LC_ALL=C
export LC_ALL
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT INT TERM
fail=0 n=0

if [ "$SOLVER" = cairn ] && [ ! -x "$CAIRN" ]; then
    echo "FAIL cairn binary not found: $CAIRN (build it, or set CAIRN)"
    exit 1
fi

for cfb in "$here"/textbook/*.cfb; do
    [ -f "$cfb" ] || continue
    name=$(basename "$cfb" .cfb)
    n=$((n + 1))
    out="$tmp/$name"
    mkdir -p "$out"
    if [ ! -f "$here/textbook/$name.expected" ]; then
        echo "FAIL $name: no $name.expected"; fail=1; continue
    fi
    if [ "$SOLVER" = reference ]; then
        (cd "$here/textbook" && "$PYTHON" ../../reference/cairn_ref.py "$name.cfb" "$out") \
            >"$tmp/$name.log" 2>&1
    else
        (cd "$here/textbook" && "$CAIRN" adjust "$name.cfb" -o "$out" --quiet) \
            >"$tmp/$name.log" 2>&1
    fi
    rc=$?
    # 1 = adjusted, but the global test failed or something was flagged:
    # still a solution to compare (textbook data need not pass cairn's tests).
    if [ $rc -gt 1 ]; then
        echo "FAIL $name: $SOLVER exited $rc"; sed 's/^/    /' "$tmp/$name.log"; fail=1; continue
    fi
    [ $rc -eq 1 ] && echo "note $name: $SOLVER exited 1 (global test failed or flagged)"
    echo "---- $name ($SOLVER)"
    if "$PYTHON" "$here/textbook/compare.py" "$here/textbook/$name.expected" "$out" >"$tmp/$name.cmp" 2>&1; then
        sed 's/^/    /' "$tmp/$name.cmp"
        echo "ok   $name"
    else
        sed 's/^/    /' "$tmp/$name.cmp"
        echo "FAIL $name"; fail=1
    fi
done
echo "textbook: $n examples, $( [ $fail -eq 0 ] && echo all agree || echo FAILURES )"
exit $fail
