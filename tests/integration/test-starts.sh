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

# corner_control.cfb: its four held pillars see no other pillar and no new
# mark sees two of them, so from computed starts the network is reached
# only in a local frame fitted to the pillars (src/solve/start_local.c;
# the loop above checks it against the reference solver). With one
# pillar's easting booked 0.5 m wrong the fit must say which: the other
# three pull the similarity transformation towards them, so the misfit
# lies between a quarter and the whole of the error (common practice, no
# source, for the 0.05 m limit it must exceed).
name=corner_control
mkdir -p "$tmp/bad/in"
"$PYTHON" "$here/strip_starts.py" "$here/networks/$name.cfb" "$tmp/bad/in/$name.cfb"
sed 's/^mark SW-NE e 2911.640 /mark SW-NE e 2912.140 /' "$tmp/bad/in/$name.cfb" >"$tmp/bad/in/bad.cfb"
grep -q '^mark SW-NE e 2912.140 ' "$tmp/bad/in/bad.cfb" || { echo "FAIL $name: cannot plant the error"; fail=1; }
(cd "$tmp/bad/in" && "$CAIRN" check bad.cfb) >"$tmp/bad/out" 2>&1
miss=$(sed -n 's/.*fitted to 4 marks with coordinates miss SW-NE by \([0-9.]*\) m.*/\1/p' "$tmp/bad/out")
if [ -n "$miss" ] && awk -v m="$miss" 'BEGIN { exit !(m > 0.125 && m <= 0.5) }'; then
    echo "ok   $name: a pillar 0.5 m out is named (misses the local frame by $miss m)"
else
    echo "FAIL $name: no misfit warning for the pillar 0.5 m out"; sed 's/^/    /' "$tmp/bad/out"; fail=1
fi
(cd "$tmp/bad/in" && "$CAIRN" check "$name.cfb") >"$tmp/bad/good" 2>&1
if grep -q 'miss' "$tmp/bad/good" || ! grep -q 'in a local frame, fitted to 4 marks' "$tmp/bad/good"; then
    echo "FAIL $name: the good pillars are not fitted quietly"; sed 's/^/    /' "$tmp/bad/good"; fail=1
fi

# corner_trilat.cfb and its east-west mirror twin: distances only, the
# pillars tied to the network in a local frame that one free choice
# settles, so for one of the two the frame is the mirror image of the
# real one and the reflected similarity must be fitted (src/solve/
# start_local.c); both fit their pillars quietly (the loop above checks
# them against the reference solver).
nmirror=0
for name in corner_trilat corner_trilat_mirror; do
    (cd "$tmp/$name/in" && "$CAIRN" check "$name.cfb") >"$tmp/$name/check" 2>&1
    grep -q 'as its mirror image' "$tmp/$name/check" && nmirror=$((nmirror + 1))
    if grep -q ' miss ' "$tmp/$name/check"; then
        echo "FAIL $name: the local frame misses its pillars"; sed 's/^/    /' "$tmp/$name/check"; fail=1
    fi
done
if [ $nmirror -eq 1 ]; then
    echo "ok   corner_trilat: exactly one of the twins is fitted as a mirror image"
else
    echo "FAIL corner_trilat: $nmirror of the twins fitted as a mirror image, not 1"; fail=1
fi
exit $fail
