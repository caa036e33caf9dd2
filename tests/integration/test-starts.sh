#!/bin/sh
# Issue #4: the reference networks with every non-control coordinate
# removed must adjust to the same result as with their given starts
# (compared with the numpy reference solver run on the original, which
# uses the given starts). Networks without any control float on computed
# starts, so only datum-invariant quantities are compared for them.
set -u
here=$(cd "$(dirname "$0")" && pwd)
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT INT TERM
fail=0
for net in "$here"/networks/*.cfb; do
    name=$(basename "$net" .cfb)
    args=$(sed -n 's/^# args: //p' "$net" | head -1)
    mkdir -p "$tmp/$name/in" "$tmp/$name/c" "$tmp/$name/r"
    "$PYTHON" "$here/strip_starts.py" "$net" "$tmp/$name/in/$name.cfb"
    # shellcheck disable=SC2086
    (cd "$here/networks" && "$PYTHON" ../../reference/cairn_ref.py "$name.cfb" "$tmp/$name/r" $args) \
        >/dev/null 2>&1 || { echo "FAIL $name: reference solver"; fail=1; continue; }
    # shellcheck disable=SC2086
    (cd "$tmp/$name/in" && "$CAIRN" adjust "$name.cfb" -o "$tmp/$name/c" --quiet $args) \
        >"$tmp/$name/log" 2>&1
    rc=$?
    if [ $rc -gt 1 ]; then
        echo "FAIL $name: cairn adjust on computed starts exited $rc"
        sed 's/^/    /' "$tmp/$name/log"; fail=1; continue
    fi
    opt=""
    grep -Eq '(hold|sd-en|sd-h)' "$net" || opt=--invariant-only
    if [ -n "$args" ]; then opt=--invariant-only; fi
    if "$PYTHON" "$here/compare.py" "$tmp/$name/c" "$tmp/$name/r" $opt >"$tmp/$name/cmp" 2>&1; then
        echo "ok   $name from computed starts ${opt:+($opt)}"
    else
        echo "FAIL $name from computed starts"; sed 's/^/    /' "$tmp/$name/cmp"; fail=1
    fi
done
exit $fail
