#!/bin/sh
# make demo-check: adjust the demo project again into a temporary directory
# and compare every file with the committed projects/ollen-crossing/results/:
# the same files, identical apart from the date and time of the run and
# the command line in report.txt and report.html (golden/mask.awk). The
# SHA-256 fingerprints are compared too: they change only with the inputs.
# Usage: sh tests/integration/golden/demo_check.sh CAIRN (from the repository root)
set -u
CAIRN=${1:-build/cairn}
here=$(cd "$(dirname "$0")" && pwd)
demo=projects/ollen-crossing
committed=$demo/results
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT INT TERM
if [ ! -d "$committed" ]; then
    echo "demo-check: $committed is missing (run make demo and commit it)"; exit 1
fi
"$CAIRN" adjust "$demo/project.xml" -o "$tmp/r" --quiet 2>/dev/null
rc=$?
if [ $rc -ne 1 ]; then
    echo "demo-check: cairn adjust exited $rc, want 1 (the demo has two planted mistakes)"; exit 1
fi
fail=0
a=$(cd "$committed" && ls -A | sort | tr '\n' ' ')
b=$(cd "$tmp/r" && ls -A | sort | tr '\n' ' ')
if [ "$a" != "$b" ]; then
    echo "demo-check: committed files [$a] but a run writes [$b]"; fail=1
fi
for f in $b; do
    [ -f "$committed/$f" ] || continue
    case $f in
    report.txt|report.html)
        awk -f "$here/mask.awk" "$committed/$f" >"$tmp/old"
        awk -f "$here/mask.awk" "$tmp/r/$f" >"$tmp/new" ;;
    *)  cp "$committed/$f" "$tmp/old"; cp "$tmp/r/$f" "$tmp/new" ;;
    esac
    if diff -u "$tmp/old" "$tmp/new" >"$tmp/diff"; then
        echo "demo-check: $f matches"
    else
        echo "demo-check: $f differs from the committed one (run make demo and commit):"
        head -30 "$tmp/diff" | sed 's/^/    /'; fail=1
    fi
done
[ $fail -eq 0 ] && echo "demo-check: the committed demo results are up to date"
exit $fail
