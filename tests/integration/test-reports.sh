#!/bin/sh
# Reports and the result set of `cairn adjust` (issues #6 and #8):
#  - golden report.txt of two projects (the demo projects/ollen-crossing and
#    projects/hollin-beck), with the date, the command line and the SHA-256
#    fingerprints masked (golden/mask.awk); UPDATE_GOLDEN=1 rewrites them;
#  - results.xml validates against share/cairn-results.xsd and holds the
#    diagnosis of each planted mistake; report.txt and the summary on
#    screen name the likely cause;
#  - report.html parses as XML and its SVG plan has one error ellipse per
#    mark with an ellipse in marks.csv (every mark not held);
#  - exit codes 0, 1, 2, 3; --format writes exactly what it names;
#  - the set is replaced atomically: a failing second run leaves the first
#    run's files untouched and no temporary behind;
#  - a results directory that is a symbolic link is refused (exit 2)
#    unless --force; an unwritable one gives exit 2 and writes nothing;
#  - an input path with `..` is marked in the report; inputs are unchanged.
# Runs from the repository root so that paths in the reports are the
# relative ones of the committed results.
set -u
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
CAIRN=${CAIRN:-$root/build/cairn}
PYTHON=${PYTHON:-/usr/bin/python3}
golden=$here/golden
xsd=$root/share/cairn-results.xsd
tmp=$(mktemp -d)
trap 'chmod -R u+w "$tmp" 2>/dev/null; rm -rf "$tmp"' EXIT INT TERM
fail=0
ok() { echo "ok   $*"; }
bad() { echo "FAIL: $*"; fail=1; }
cd "$root" || exit 1

# the diagnosis element of observation SEQ: 'kind|corrected|mark'
diag() {
    sed -n "/<observation seq=\"$2\" /,/<\/observation>/p" "$1" |
        sed -n 's/.*<diagnosis kind="\([^"]*\)" corrected="\([^"]*\)" mark="\([^"]*\)".*/\1|\2|\3/p'
}
seq_of() {   # seq of the observation of kind KIND read at SOURCE (FILE:LINE)
    sed -n "s#.*<observation seq=\"\([0-9]*\)\" kind=\"$2\" .*source=\"$3\".*#\1#p" "$1"
}
sums() { (cd "$1" && for f in *; do cksum "$f"; done) 2>/dev/null; }

# ---- golden report.txt of the two projects ---------------------------------
for proj in ollen-crossing hollin-beck; do
    out=$tmp/$proj
    "$CAIRN" adjust "projects/$proj/project.xml" -o "$out" >"$tmp/$proj.stdout" 2>"$tmp/$proj.stderr"
    rc=$?
    [ $rc -eq 1 ] || bad "$proj: exit $rc, want 1 (planted mistakes)"
    awk -v sha=1 -f "$golden/mask.awk" "$out/report.txt" >"$tmp/$proj.masked"
    if [ "${UPDATE_GOLDEN:-0}" = 1 ]; then
        cp "$tmp/$proj.masked" "$golden/$proj.report.txt"
        echo "updated golden/$proj.report.txt"
    elif diff -u "$golden/$proj.report.txt" "$tmp/$proj.masked" >"$tmp/diff"; then
        ok "$proj: report.txt matches golden/$proj.report.txt (date, command line, SHA-256 masked)"
    else
        bad "$proj: report.txt differs from the golden copy (UPDATE_GOLDEN=1 to accept):"
        head -40 "$tmp/diff" | sed 's/^/    /'
    fi
    w=$("$PYTHON" -c 'import sys; print(max(len(l.rstrip("\n")) for l in open(sys.argv[1], encoding="utf-8")))' "$out/report.txt")
    [ "$w" -le 100 ] || bad "$proj: report.txt has a line of $w columns (over 100)"
    if command -v xmllint >/dev/null 2>&1; then
        xmllint --noout --nonet --schema "$xsd" "$out/results.xml" 2>"$tmp/xl" &&
            ok "$proj: results.xml validates against share/cairn-results.xsd" ||
            { bad "$proj: results.xml does not validate"; cat "$tmp/xl"; }
    fi
    # report.html: well-formed XML, an SVG plan, one ellipse per mark whose
    # plane position is adjusted
    if "$PYTHON" - "$out/report.html" "$out/marks.csv" <<'PY'
import csv, sys
import xml.etree.ElementTree as ET
t = ET.parse(sys.argv[1])
svg = '{http://www.w3.org/2000/svg}'
ells = [e for e in t.iter(svg + 'ellipse') if e.get('class') == 'cn-ell']
rows = list(csv.DictReader(open(sys.argv[2])))
# every mark whose plane position is adjusted (not held) has an ellipse
want = sum(1 for r in rows if r['sd_e'] and r['sd_n'])
have = sum(1 for r in rows if r['major'])
plans = [s for s in t.iter(svg + 'svg')]
print("  report.html: %d svg, %d plan ellipses, %d marks with an adjusted position"
      % (len(plans), len(ells), want))
sys.exit(0 if plans and len(ells) == want == have and want > 0 else 1)
PY
    then ok "$proj: report.html is well-formed XML with one plan ellipse per adjusted mark"
    else bad "$proj: report.html is not well-formed or its ellipses do not match marks.csv"; fi
done

# ---- the diagnoses of the planted mistakes ---------------------------------
x=$tmp/ollen-crossing/results.xml
s=$(seq_of "$x" slope "projects/ollen-crossing/day2.cfb:28")
d=$(diag "$x" "$s")
[ "$d" = "transposed-digits|190.6566|" ] &&
    ok "demo: slope day2.cfb:28 (seq $s) diagnosed transposed-digits, corrected 190.6566" ||
    bad "demo: slope day2.cfb:28 diagnosis is [$d], want transposed-digits|190.6566|"
grep -q "likely cause: transposed digits: slope 190.5666 -> 190.6566" "$tmp/ollen-crossing/report.txt" ||
    bad "demo: report.txt does not give the likely cause of the slope"
grep -q "likely cause: transposed-digits: slope 190.5666 -> 190.6566" "$tmp/ollen-crossing.stdout" ||
    bad "demo: the summary on screen does not give the likely cause of the slope"
s=$(seq_of "$x" zenith "projects/ollen-crossing/day1.cfb:23")
d=$(diag "$x" "$s")
case $d in
target-height\|1.700\|) ok "demo: zenith day1.cfb:23 (seq $s) diagnosed target-height, th 1.700" ;;
*) bad "demo: zenith day1.cfb:23 diagnosis is [$d]" ;;
esac
x=$tmp/hollin-beck/results.xml
s=$(seq_of "$x" rise "projects/hollin-beck/levels.cfb:41")
d=$(diag "$x" "$s")
[ "$d" = "sign-slip|1.76733|" ] && ok "hollin-beck: rise levels.cfb:41 diagnosed sign-slip, 1.76733" ||
    bad "hollin-beck: rise levels.cfb:41 diagnosis is [$d], want sign-slip|1.76733|"

# ---- exit codes -------------------------------------------------------------
(cd tests/integration/networks && "$CAIRN" adjust dirs_dists.cfb -o "$tmp/e0" --quiet)
rc=$?; [ $rc -eq 0 ] && [ -f "$tmp/e0/report.txt" ] && ok "exit 0: clean network, reports written" ||
    bad "clean network: exit $rc, want 0 with report.txt"
"$CAIRN" adjust "$tmp/no-such-project.xml" -o "$tmp/e2" --quiet 2>/dev/null
rc=$?; [ $rc -eq 2 ] && [ ! -e "$tmp/e2" ] && ok "exit 2: missing project, nothing written" ||
    bad "missing project: exit $rc (want 2) or something was written"
"$CAIRN" adjust projects/hollin-beck/project.xml --format pdf -o "$tmp/e2b" 2>/dev/null
rc=$?; [ $rc -eq 2 ] && [ ! -e "$tmp/e2b" ] && ok "exit 2: --format pdf refused" ||
    bad "--format pdf: exit $rc, want 2"
(cd tests/bad && "$CAIRN" adjust unreachable-marks.cfb -o "$tmp/e3" --quiet 2>/dev/null)
rc=$?; [ $rc -eq 3 ] && [ ! -e "$tmp/e3" ] && ok "exit 3: unreachable marks, nothing written" ||
    bad "unreachable marks: exit $rc (want 3) or something was written"

# ---- --format ------------------------------------------------------------------
for spec in "txt:report.txt" "html:report.html" "csv:marks.csv observations.csv" \
            "xml:results.xml" "txt,xml:report.txt results.xml"; do
    f=${spec%%:*}
    want=${spec#*:}
    "$CAIRN" adjust projects/hollin-beck/project.xml -o "$tmp/fmt-$f" --format "$f" --quiet 2>/dev/null
    got=$(cd "$tmp/fmt-$f" && ls -A | sort | tr '\n' ' ' | sed 's/ $//')
    w=$(echo "$want" | tr ' ' '\n' | sort | tr '\n' ' ' | sed 's/ $//')
    [ "$got" = "$w" ] || bad "--format $f wrote [$got], want [$w]"
done
ok "--format writes exactly the files named"

# ---- atomic replacement ------------------------------------------------------
cp -r projects/hollin-beck "$tmp/proj"
rm -rf "$tmp/proj/results"
in_before=$(sums "$tmp/proj")
"$CAIRN" adjust "$tmp/proj/project.xml" -o "$tmp/set" --quiet 2>/dev/null
first=$(sums "$tmp/set")
[ -n "$first" ] || bad "atomic: the first run wrote nothing"
[ "$(sums "$tmp/proj")" = "$in_before" ] || bad "the input files were modified"
# second run fails at loading: the project is made invalid
sed 's/<units /<unitz /' "$tmp/proj/project.xml" >"$tmp/proj/broken.xml"
"$CAIRN" adjust "$tmp/proj/broken.xml" -o "$tmp/set" --quiet 2>/dev/null
rc=$?
[ $rc -eq 2 ] && [ "$(sums "$tmp/set")" = "$first" ] &&
    ok "atomic: an invalid project (exit 2) leaves the previous results untouched" ||
    bad "atomic: invalid project gave exit $rc or changed the previous results"
# second run fails at writing: report.html is taken by a directory, so the
# set cannot be completed; report.txt (first in the set) must stay old too
mv "$tmp/set/report.html" "$tmp/report.html.saved"
mkdir "$tmp/set/report.html"
"$CAIRN" adjust "$tmp/proj/project.xml" -o "$tmp/set" --quiet 2>"$tmp/err"
rc=$?
rmdir "$tmp/set/report.html"
mv "$tmp/report.html.saved" "$tmp/set/report.html"
[ $rc -eq 2 ] && [ "$(sums "$tmp/set")" = "$first" ] &&
    ok "atomic: a write failure (exit 2) leaves every previous file untouched" ||
    { bad "atomic: write failure gave exit $rc or changed the previous results"; cat "$tmp/err"; }
[ -z "$(ls -A "$tmp/set" | grep '\.tmp')" ] && ok "atomic: no temporary file left behind" ||
    bad "atomic: temporaries left: $(ls -A "$tmp/set")"

# ---- symbolic link, unwritable directory --------------------------------------
mkdir "$tmp/real"
ln -s "$tmp/real" "$tmp/link"
"$CAIRN" adjust projects/hollin-beck/project.xml -o "$tmp/link" --quiet 2>"$tmp/err"
rc=$?
[ $rc -eq 2 ] && [ -z "$(ls -A "$tmp/real")" ] && grep -q "symbolic link" "$tmp/err" &&
    ok "a results directory that is a symbolic link is refused (exit 2): $(head -1 "$tmp/err")" ||
    bad "symlink: exit $rc, $(ls -A "$tmp/real" | wc -l) files written"
"$CAIRN" adjust projects/hollin-beck/project.xml -o "$tmp/link" --quiet --force 2>/dev/null
rc=$?
[ $rc -eq 1 ] && [ -f "$tmp/real/report.txt" ] && ok "--force writes through the link" ||
    bad "--force: exit $rc"
: >"$tmp/afile"
"$CAIRN" adjust projects/hollin-beck/project.xml -o "$tmp/afile/sub" --quiet 2>"$tmp/err"
rc=$?
[ $rc -eq 2 ] && [ ! -s "$tmp/afile" ] &&
    ok "a results directory that cannot be created (under a regular file) gives exit 2" ||
    bad "results under a file: exit $rc"
if [ "$(id -u)" != 0 ]; then
    mkdir "$tmp/ro" && chmod 555 "$tmp/ro"
    "$CAIRN" adjust projects/hollin-beck/project.xml -o "$tmp/ro" --quiet 2>/dev/null
    rc=$?
    [ $rc -eq 2 ] && [ -z "$(ls -A "$tmp/ro")" ] &&
        ok "an unwritable results directory gives exit 2 and nothing half-written" ||
        bad "unwritable directory: exit $rc, left: $(ls -A "$tmp/ro")"
else
    echo "SKIP unwritable directory: running as root, which can write anywhere" \
         "(simulated above with a path under a regular file)"
fi

# ---- a field book reached through '..' ---------------------------------------
mkdir -p "$tmp/dd/a" "$tmp/dd/b"
cp projects/hollin-beck/levels.cfb "$tmp/dd/b/"
sed 's|file="levels.cfb"|file="../b/levels.cfb"|' projects/hollin-beck/project.xml \
    >"$tmp/dd/a/project.xml"
"$CAIRN" adjust "$tmp/dd/a/project.xml" -o "$tmp/dd/out" --quiet 2>/dev/null
grep -q "a/../b/levels.cfb  \[path contains '..'\]" "$tmp/dd/out/report.txt" &&
    grep -q "1 input path has a '..' component" "$tmp/dd/out/report.txt" &&
    ok "an input path with '..' is marked in the run section and the caution" ||
    bad "the '..' input path is not marked in report.txt"

# ---- a large network: the HTML tables thin themselves ------------------------
# 800 marks of the bench generator give about 11 000 observations, more than
# the 5000 rows an HTML table shows (report_html.c).
if ${CC:-cc} -std=c11 -O2 -o "$tmp/gen" tests/bench/gen.c -lm 2>/dev/null &&
    "$tmp/gen" --kind plane --marks 800 --seed 3 -o "$tmp/big.cfb" 2>/dev/null; then
    "$CAIRN" adjust "$tmp/big.cfb" -o "$tmp/big" --format html,csv --snoop off --quiet 2>/dev/null
    nobs=$(($(wc -l <"$tmp/big/observations.csv") - 1))
    rows=$(grep -o '<tr class="st-[a-z]*"' "$tmp/big/report.html" | wc -l)
    if [ "$nobs" -gt 5000 ] && grep -q "has $nobs observations .*the table shows the first 5000" \
        "$tmp/big/report.html"; then
        ok "report.html: $nobs observations, the table says it shows the first 5000 ($rows status rows in all)"
    else
        bad "report.html of $nobs observations does not thin its table"
    fi
    # The same network with the default snooping: about 11 of its 11 202
    # w-tests fail by chance at alpha 0.001 (alpha x tests, the meaning of
    # the significance level), and 12 fail, so the caution must say that
    # chance explains them; with 40 planted blunders (55 failures) it must
    # not.
    "$CAIRN" adjust "$tmp/big.cfb" -o "$tmp/bigi" --format txt --quiet 2>/dev/null
    tr -s ' \n' ' ' <"$tmp/bigi/report.txt" >"$tmp/bigi.sq"
    if grep -q "failures expected by chance 11.2 (alpha 0.001 x $nobs w-tests)" "$tmp/bigi.sq" &&
        grep -q "About 11 of the $nobs w-tests fail BY CHANCE alone" "$tmp/bigi.sq"; then
        ok "report.txt: failures no more than chance explains are called so"
    else
        bad "report.txt of a blunder-free $nobs-observation network does not state the chance failures"
    fi
    if "$tmp/gen" --kind plane --marks 800 --seed 3 --blunders 40 -o "$tmp/bigb.cfb" 2>/dev/null; then
        "$CAIRN" adjust "$tmp/bigb.cfb" -o "$tmp/bigb" --format txt --quiet 2>/dev/null
        if grep -q "failures expected by chance" "$tmp/bigb/report.txt" &&
            ! grep -q "BY CHANCE" "$tmp/bigb/report.txt"; then
            ok "report.txt: 40 planted blunders are not put down to chance"
        else
            bad "report.txt puts 40 planted blunders down to chance"
        fi
    else
        bad "cannot run the bench generator with planted blunders"
    fi
else
    bad "cannot build or run the bench generator for the large-network report test"
fi

[ $fail -eq 0 ] && echo "reports: all checks passed"
exit $fail
