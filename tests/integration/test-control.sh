#!/bin/sh
# The test of each held mark's given coordinates (src/quality/control.c,
# results.xml <held-mark-test>), against the numpy reference solver
# (tests/reference/cairn_ref.py control_tests: the same statistic with a
# dense inverse; compare.py checks statistic, dimension and shift) and
# against the error planted in the held coordinate:
#  - corner_control.cfb with pillar SW-NE's easting booked 0.5 m east of
#    its value: before snooping its observations put it 0.45-0.55 m west
#    of the booked value, snooping removes most of them, and the caution
#    and the screen name SW-NE (and no other pillar);
#  - the same network as booked: every pillar passes, no warning;
#  - the same network with one distance from pillar SW-NW booked 0.1 m
#    long, under --snoop flag: every pillar fails, but the blunder's w
#    explains the data better, and the caution says so in one line naming
#    that observation instead of accusing the pillars; with iterate
#    snooping the blunder goes and no pillar is named;
#  - level_km.cfb with bench mark BM-B booked 0.030 m high: with two held
#    bench marks the observations see only their difference, so both fail
#    alike and put BM-B 0.025-0.035 m down (and BM-A as much up).
set -u
here=$(cd "$(dirname "$0")" && pwd)
CAIRN=${CAIRN:-$here/../../build/cairn}
PYTHON=${PYTHON:-/usr/bin/python3}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT INT TERM
fail=0
ok() { echo "ok   $1"; }
bad() { echo "FAIL $1"; fail=1; }

# attribute $3 of the held-mark-test of mark $2 in results.xml $1
attr() {
    "$PYTHON" - "$1" "$2" "$3" <<'PY'
import sys, xml.etree.ElementTree as ET
for e in ET.parse(sys.argv[1]).getroot().findall("held-mark-test"):
    if e.get("mark") == sys.argv[2]:
        print(e.get(sys.argv[3], ""))
PY
}

run_pair() {   # name fieldbook [cairn args]
    name=$1 book=$2; shift 2
    mkdir -p "$tmp/$name"
    (cd "$tmp" && "$CAIRN" adjust "$book" -o "$tmp/$name/c" "$@") >"$tmp/$name/screen" 2>&1
    crc=$?
    (cd "$tmp" && "$PYTHON" "$here/../reference/cairn_ref.py" "$book" "$tmp/$name/r" "$@") \
        >"$tmp/$name/ref.log" 2>&1
    [ $? -le 1 ] || { bad "$name: reference solver failed"; sed 's/^/    /' "$tmp/$name/ref.log"; return; }
    if [ $crc -le 1 ] && "$PYTHON" "$here/compare.py" "$tmp/$name/c" "$tmp/$name/r" \
        --rejected-as-set >"$tmp/$name/cmp" 2>&1 && grep -q 'held-mark tests' "$tmp/$name/cmp"; then
        ok "$name: held-mark tests agree with the reference solver ($(sed -n 's/.*held-mark tests: //p' "$tmp/$name/cmp"))"
    else
        bad "$name: held-mark tests differ from the reference (exit $crc)"
        sed 's/^/    /' "$tmp/$name/cmp" "$tmp/$name/screen"
    fi
}

in_range() { awk -v x="$1" -v lo="$2" -v hi="$3" 'BEGIN { exit !(x != "" && x >= lo && x <= hi) }'; }

cp "$here/networks/corner_control.cfb" "$tmp/good.cfb"
sed 's/^mark SW-NE e 2911.640 /mark SW-NE e 2912.140 /' "$here/networks/corner_control.cfb" >"$tmp/pillar.cfb"
grep -q '^mark SW-NE e 2912.140 ' "$tmp/pillar.cfb" || bad "cannot plant the pillar error"
sed 's/^mark BM-B h 152.042 /mark BM-B h 152.072 /' "$here/networks/level_km.cfb" >"$tmp/bench.cfb"
grep -q '^mark BM-B h 152.072 ' "$tmp/bench.cfb" || bad "cannot plant the bench mark error"

sed 's/^to S1 hz 243.34499 horiz 269.5189$/to S1 hz 243.34499 horiz 269.6189/' "$here/networks/corner_control.cfb" >"$tmp/dist.cfb"
grep -q 'horiz 269.6189$' "$tmp/dist.cfb" || bad "cannot plant the distance blunder"
run_pair good good.cfb
run_pair pillar pillar.cfb
run_pair pillar-flag pillar.cfb --snoop flag
run_pair bench bench.cfb

x=$tmp/pillar/c/results.xml
se=$(attr "$x" SW-NE shift-e-first)
if [ "$(attr "$x" SW-NE status-first)" = fail ] && in_range "$se" -0.55 -0.45; then
    ok "pillar: SW-NE fails before snooping, put $se m east of its booked easting (planted +0.5)"
else
    bad "pillar: SW-NE status-first $(attr "$x" SW-NE status-first), shift-e-first $se"
fi
rep=$tmp/pillar/c/report.txt
if sed -n '1,/^====/p' "$rep" | grep -q 'held mark SW-NE FAILED the test'; then
    ok "pillar: the caution names SW-NE"
else
    bad "pillar: the caution does not name SW-NE"; sed -n '1,/^====/p' "$rep" | sed 's/^/    /'
fi
for m in SW-NW SW-SE SW-SW; do
    if sed -n '1,/^====/p' "$rep" | grep -q "held mark $m F"; then
        bad "pillar: the caution also accuses $m"
    fi
done
grep -q 'SW-NE FAILED before snooping' "$tmp/pillar/screen" && ok "pillar: the screen names SW-NE" ||
    { bad "pillar: the screen does not name SW-NE"; sed 's/^/    /' "$tmp/pillar/screen"; }
# flag: nothing is removed, so the mark fails at the end and says so
grep -q 'SW-NE FAILS' "$tmp/pillar-flag/screen" && ok "pillar --snoop flag: SW-NE FAILS" ||
    bad "pillar --snoop flag: SW-NE not reported as failing"

for mode in flag iterate; do
    mkdir -p "$tmp/dist-$mode"
    (cd "$tmp" && "$CAIRN" adjust dist.cfb -o "$tmp/dist-$mode" --snoop $mode) >"$tmp/dist-$mode/screen" 2>&1
    cau=$(sed -n '1,/^====/p' "$tmp/dist-$mode/report.txt" | tr '\n' ' ' | tr -s ' ')
    if echo "$cau" | grep -q 'Held mark .* FAIL'; then
        bad "dist --snoop $mode: a pillar is accused of a distance blunder"; echo "$cau" | sed 's/^/    /'
    elif [ $mode = flag ] && ! echo "$cau" | grep -q 'but a single blunder explains the data as well: observation #[0-9]* (dist.cfb:[0-9]*)'; then
        bad "dist --snoop flag: the caution does not point at the blunder"; echo "$cau" | sed 's/^/    /'
    else
        ok "dist --snoop $mode: the distance blunder is not put on the pillars"
    fi
done

g=$tmp/good/c
if ! grep -q 'held mark .* FAIL' "$g/report.txt" && grep -q '4 tested against their observations: 0 fail' "$g/../screen"; then
    ok "good: the four pillars pass quietly"
else
    bad "good: a sound pillar is reported"; grep 'held mark' "$g/report.txt" | sed 's/^/    /'
fi

x=$tmp/bench/c/results.xml
hb=$(attr "$x" BM-B shift-h-first) ha=$(attr "$x" BM-A shift-h-first)
if in_range "$hb" -0.035 -0.025 && in_range "$ha" 0.025 0.035; then
    ok "bench: BM-B put $hb m (planted +0.030), BM-A $ha m: two held marks fail alike"
else
    bad "bench: shifts BM-B $hb, BM-A $ha"
fi
if [ "$(attr "$x" BM-B alike)" = BM-A ] &&
   sed -n '1,/^====/p' "$tmp/bench/c/report.txt" | grep -q 'Held marks BM-B and BM-A fail alike'; then
    ok "bench: the caution says the observations cannot tell BM-A from BM-B"
else
    bad "bench: no 'fail alike' for BM-A and BM-B"; sed -n '1,/^====/p' "$tmp/bench/c/report.txt" | sed 's/^/    /'
fi
exit $fail
