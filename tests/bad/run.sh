#!/bin/sh
# Malformed-input tests: sh tests/bad/run.sh CAIRN_BINARY
#
# For every NAME.expect here, runs `cairn check NAME.cfb` (or NAME.xml)
# from this directory, so that file names in messages are plain names.
# When NAME.args exists, its words replace `check` (e.g. `adjust -o @TMP@`;
# @TMP@ is a scratch directory).
# NAME.expect: the first line is the expected exit status; every further
# line is a string that must appear verbatim in stderr, or, when it starts
# with '!', a string that must not appear. Prints one line per case and
# exits non-zero when any case fails. A crash (status 128 or more) always
# fails.
set -u
cairn=${1:?usage: sh tests/bad/run.sh CAIRN_BINARY}
case $cairn in
/*) ;;
*) cairn=$(pwd)/$cairn ;;
esac
cd "$(dirname "$0")" || exit 2
LC_ALL=C
export LC_ALL
tmp=$(mktemp -d) || exit 2
trap 'rm -rf "$tmp"' EXIT
trap 'exit 2' INT TERM HUP

pass=0
fail=0
for exp in *.expect; do
    name=${exp%.expect}
    if [ -f "$name.cfb" ]; then
        input=$name.cfb
    elif [ -f "$name.xml" ]; then
        input=$name.xml
    else
        echo "FAIL $name: no $name.cfb or $name.xml"
        fail=$((fail + 1))
        continue
    fi
    cmd=check
    if [ -f "$name.args" ]; then
        cmd=$(sed "s|@TMP@|$tmp/res|g" "$name.args")
    fi
    # shellcheck disable=SC2086
    "$cairn" $cmd "$input" >"$tmp/out" 2>"$tmp/err"
    rc=$?
    want=$(sed -n 1p "$exp")
    why=""
    if [ "$rc" -ge 128 ]; then
        why="crashed (status $rc)"
    elif [ "$rc" != "$want" ]; then
        why="exit status $rc, expected $want"
    fi
    sed 1d "$exp" >"$tmp/lines"
    while IFS= read -r line || [ -n "$line" ]; do
        [ -n "$line" ] || continue
        case $line in
        !*)
            if grep -qF -- "${line#!}" "$tmp/err"; then
                why="$why${why:+; }unexpected: ${line#!}"
            fi ;;
        *)
            if ! grep -qF -- "$line" "$tmp/err"; then
                why="$why${why:+; }missing: $line"
            fi ;;
        esac
    done <"$tmp/lines"
    if [ -z "$why" ]; then
        echo "ok   $input"
        pass=$((pass + 1))
    else
        echo "FAIL $input: $why"
        sed 's/^/     | /' "$tmp/err" | head -20
        fail=$((fail + 1))
    fi
done
echo "bad inputs: $pass passed, $fail failed"
[ "$fail" -eq 0 ]
