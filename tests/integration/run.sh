#!/bin/sh
# Integration tests: every tests/integration/*.sh script, then the
# comparison of `cairn adjust` with the independent numpy reference solver
# (tests/reference/cairn_ref.py) on every network in networks/.
# Environment: CAIRN (the binary), PYTHON (a python3 with numpy).
set -u
here=$(cd "$(dirname "$0")" && pwd)
CAIRN=${CAIRN:-$here/../../build/cairn}
PYTHON=${PYTHON:-/usr/bin/python3}
export CAIRN PYTHON LC_ALL=C
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT INT TERM
fail=0 n=0

for t in "$here"/test-*.sh; do
    [ -f "$t" ] || continue
    n=$((n + 1))
    if sh "$t" >"$tmp/out" 2>&1; then
        echo "ok   $(basename "$t")"
    else
        echo "FAIL $(basename "$t")"; sed 's/^/    /' "$tmp/out"; fail=1
    fi
done

for net in "$here"/networks/*.cfb; do
    [ -f "$net" ] || continue
    name=$(basename "$net" .cfb)
    # A network may ask for extra arguments with a line "# args: ...".
    args=$(sed -n 's/^# args: //p' "$net" | head -1)
    n=$((n + 1))
    mkdir -p "$tmp/$name/c" "$tmp/$name/r"
    # shellcheck disable=SC2086
    (cd "$here/networks" && "$PYTHON" ../../reference/cairn_ref.py "$name.cfb" "$tmp/$name/r" $args) \
        >"$tmp/$name/ref.log" 2>&1
    rrc=$?
    # shellcheck disable=SC2086
    (cd "$here/networks" && "$CAIRN" adjust "$name.cfb" -o "$tmp/$name/c" --quiet $args) \
        >"$tmp/$name/cairn.log" 2>&1
    crc=$?
    if [ $rrc -ne 0 ]; then
        echo "FAIL $name: reference solver failed"; sed 's/^/    /' "$tmp/$name/ref.log"; fail=1; continue
    fi
    if [ $crc -gt 1 ]; then
        echo "FAIL $name: cairn adjust exited $crc"; sed 's/^/    /' "$tmp/$name/cairn.log"; fail=1; continue
    fi
    if "$PYTHON" "$here/compare.py" "$tmp/$name/c" "$tmp/$name/r" >"$tmp/$name/cmp" 2>&1; then
        echo "ok   $name (agrees with the numpy reference solver)"
        grep note "$tmp/$name/cmp" | sed 's/^/    /'
    else
        echo "FAIL $name"; sed 's/^/    /' "$tmp/$name/cmp"; fail=1
    fi
done
echo "integration: $n cases, $( [ $fail -eq 0 ] && echo all passed || echo FAILURES )"
exit $fail
