#!/bin/sh
# `cairn check FILE -o DIR` on the field books in misclosure/: exit status
# (0 every check passes, 1 a check fails, 2 input error) and the rows of
# misclosures.csv (FORMAT.md "Result files"). Expected values are
# hand-computed from the booked values (see the comment in each field book
# and tests/unit/test_misclosure.c); the allowance case is the FGCC 1984
# third-order loop allowance 12 mm·√K (REFERENCES.md §4.3 [M]: 16 km
# allows 48 mm); the fail rule, three expected SD, is common practice, no
# source.
# Environment: CAIRN (the binary), PYTHON (python3 for CSV parsing).
set -u
here=$(cd "$(dirname "$0")" && pwd)
CAIRN=${CAIRN:-$here/../../build/cairn}
PYTHON=${PYTHON:-/usr/bin/python3}
LC_ALL=C
export LC_ALL
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT INT TERM
fail=0

# run NAME EXPECTED-EXIT: cairn check misclosure/NAME.cfb -o $tmp/NAME
run() {
    (cd "$here/misclosure" && "$CAIRN" check "$1.cfb" -o "$tmp/$1") >"$tmp/$1.out" 2>"$tmp/$1.err"
    rc=$?
    if [ "$rc" -ne "$2" ]; then
        echo "FAIL $1: exit $rc, expected $2"; cat "$tmp/$1.out" "$tmp/$1.err" | sed 's/^/    /'; fail=1
        return 1
    fi
    echo "ok   $1: exit $rc"
    return 0
}

# rows NAME: compare misclosures.csv with the expected rows on stdin
# (kind,route,misclosure,length,expected_sd,status; numbers to 1e-6, the
# source column checked as FILE:LINE).
cat >"$tmp/rows.py" <<'EOF'
import csv, sys
path, name = sys.argv[1], sys.argv[2]
want = [l.strip().split(";") for l in sys.stdin if l.strip()]
with open(path, newline="") as f:
    r = list(csv.reader(f))
head = "kind,route,misclosure,length,expected_sd,ratio,status,source".split(",")
bad = []
if r[0] != head:
    bad.append("header %r" % (r[0],))
got = r[1:]
if len(got) != len(want):
    bad.append("%d rows, expected %d" % (len(got), len(want)))
def num(a, b):
    if b == "":
        return a == ""
    return a != "" and abs(float(a) - float(b)) <= 1e-6
for g, w in zip(got, want):
    kind, route, mis, length, sd, status, src = w
    ok = (g[0] == kind and g[1] == route and num(g[2], mis) and num(g[3], length)
          and num(g[4], sd) and g[6] == status and g[7] == src)
    if sd and g[4] and abs(float(g[5]) - abs(float(g[2])) / float(g[4])) > 1e-4:
        ok = False
    if not ok:
        bad.append("row %s, expected %s" % (",".join(g), ",".join(w)))
for b in bad:
    print("FAIL %s: %s" % (name, b))
if bad:
    sys.exit(1)
print("ok   %s: %d rows as expected" % (name, len(got)))
EOF
rows() {
    "$PYTHON" "$tmp/rows.py" "$tmp/$1/misclosures.csv" "$1" || fail=1
}

# Level loop 1.2345 − 0.5678 − 0.6640 = +2.7 mm against 1 mm·√4 km; line
# 1.2345 + 2.1000 + 0.4321 − (103.7626 − 100) = +4.0 mm against 1 mm·√3.7.
run level 0 && rows level <<'EOF'
level-loop;BM1 L1 L2 BM1;0.0027;4000;0.002;ok;level.cfb:7
level-line;BM1 L1 L3 BM2;0.0040;3700;0.0019235384;ok;level.cfb:7
EOF

# 0.5 + 0.25 − 0.74 = 10 mm against 2 mm: ratio 5 > 3; the two rises P3–P4
# (setups only: no length) close within 0.5 mm·√4·√2.
run level_fail 1 && rows level_fail <<'EOF'
level-loop;P1 P2 P3 P1;0.0100;4000;0.002;fail;level_fail.cfb:6
level-loop;P3 P4 P3;-0.0010;;0.0014142136;ok;level_fail.cfb:9
EOF

# 49 mm over 16 km: inside 3·20 mm, outside the 48 mm allowance.
run allowance 1 && rows allowance <<'EOF'
level-loop;M1 M2 M3 M1;0.0490;16000;0.020;fail;allowance.cfb:8
EOF

# Face pairs: −10" (hz, X), −10" (zen, X), +6" (hz, Y) against √2·4";
# sets: +13" against √48"; distances: S1–X slopes reduced with their
# zeniths (180.0020·sin 88°30'10" − 180·sin 88°30'00"), S1–Y spread 5 mm.
run rounds 0 && rows rounds <<'EOF'
face-pair;S1 X;-10;;5.6568542;ok;rounds.cfb:6
face-pair;S1 X;-10;;5.6568542;ok;rounds.cfb:6
face-pair;S1 Y;6;;5.6568542;ok;rounds.cfb:8
set-agreement;S1 X Y;13;;6.9282032;ok;rounds.cfb:6
repeat-distance;S1 X;0.0022275;179.9394323;0.0028739;ok;rounds.cfb:6
repeat-distance;S1 Y;0.0050;250.0013333;0.0029155;ok;rounds.cfb:8
EOF

# Traverses: the angular misclosures are the sums of the errors planted in
# the foresights (+2 − 1.5 + 3 − 2 = +1.5"; +1.5 − 2.5 + 2 − 4 = −3"),
# rounded to 0.1" in the booking; the linear rows are checked by the unit
# test, here only their presence and status.
run traverse_link 0 && "$PYTHON" - "$tmp/traverse_link/misclosures.csv" <<'EOF' || fail=1
import csv, sys
r = list(csv.reader(open(sys.argv[1])))[1:]
assert [x[0] for x in r] == ["traverse-angular", "traverse-linear"], r
assert r[0][1] == "RA A T1 T2 B RB" and abs(float(r[0][2]) - 1.5) < 0.15, r[0]
assert abs(float(r[0][4]) - 32 ** 0.5) < 1e-6, r[0]
assert r[1][1] == "A T1 T2 B" and r[1][6] == "ok", r[1]
assert abs(float(r[1][3]) - 989.0829) < 1e-6, r[1]
print("ok   traverse_link: rows as expected")
EOF
run traverse_loop 0 && "$PYTHON" - "$tmp/traverse_loop/misclosures.csv" <<'EOF' || fail=1
import csv, sys
r = list(csv.reader(open(sys.argv[1])))[1:]
assert [x[1] for x in r] == ["RC C U1 U2 U3 C RC", "C U1 U2 U3 C"], r
assert abs(float(r[0][2]) + 3.0) < 0.15, r[0]
print("ok   traverse_loop: rows as expected")
EOF

# Nothing to close: the message, exit 0, a header-only file.
if run none 0; then
    grep -q "^no misclosure checks apply$" "$tmp/none.out" ||
        { echo "FAIL none: message missing"; fail=1; }
    rows none </dev/null
fi

# Input error: exit 2 and nothing written.
printf 'units m dms\nrise A B 1.0 km\n' >"$tmp/bad.cfb"
"$CAIRN" check "$tmp/bad.cfb" -o "$tmp/bad" >"$tmp/bad.out" 2>&1
rc=$?
if [ $rc -ne 2 ] || [ -e "$tmp/bad/misclosures.csv" ]; then
    echo "FAIL bad input: exit $rc (expected 2), or misclosures.csv written"; fail=1
else
    echo "ok   bad input: exit 2, nothing written"
fi

# The screen table stays within 100 columns.
for f in "$tmp"/*.out; do
    if awk 'length($0) > 100 { exit 1 }' "$f"; then :; else
        echo "FAIL $(basename "$f"): a line wider than 100 columns"; fail=1
    fi
done
exit $fail
