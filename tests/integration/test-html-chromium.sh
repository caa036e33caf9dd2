#!/bin/sh
# Render report.html in headless Chromium and check that a non-trivial
# screenshot comes out. Skipped (exit 0) when /usr/bin/chromium is absent:
# no other test depends on a browser.
# Environment: CAIRN (the binary; libcairn.a is expected beside it),
# REPORT_DEMO (optional: a built tests/tools/report_demo), CC, PYTHON.
set -u
CHROMIUM=${CHROMIUM:-/usr/bin/chromium}
if [ ! -x "$CHROMIUM" ]; then
    echo "SKIP: chromium not installed"
    exit 0
fi
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
PYTHON=${PYTHON:-/usr/bin/python3}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT INT TERM

demo=${REPORT_DEMO:-}
if [ -z "$demo" ]; then
    lib=$(dirname "${CAIRN:-$root/build/cairn}")/libcairn.a
    if [ ! -f "$lib" ]; then
        echo "FAIL: $lib not found (set CAIRN or REPORT_DEMO)"; exit 1
    fi
    # a sanitizer build of the library needs the same runtime
    san=""
    if nm "$lib" 2>/dev/null | grep -q __asan_init; then
        san="-fsanitize=address,undefined"
    fi
    # shellcheck disable=SC2086
    ${CC:-cc} -std=c11 -D_POSIX_C_SOURCE=200809L -O1 $san -I"$root/include" \
        -o "$tmp/report_demo" "$root/tests/tools/report_demo.c" "$lib" -lnettle -lm \
        || { echo "FAIL: cannot build report_demo"; exit 1; }
    demo=$tmp/report_demo
fi

fail=0
for case in small grid; do
    mkdir -p "$tmp/$case"
    if [ $case = small ]; then "$demo" "$tmp/$case"; else "$demo" "$tmp/$case" --grid 12; fi \
        || { echo "FAIL: report_demo ($case)"; fail=1; continue; }
    png=$tmp/$case/shot.png
    timeout 120 "$CHROMIUM" --headless --no-sandbox --disable-gpu \
        --disable-background-networking --disable-component-update --disable-sync \
        --no-first-run --user-data-dir="$(mktemp -d -p "$tmp")" --hide-scrollbars \
        --screenshot="$png" --window-size=1200,1600 "file://$tmp/$case/report.html" \
        >"$tmp/$case/chromium.log" 2>&1
    if [ ! -s "$png" ]; then
        echo "FAIL: $case: no screenshot"; sed 's/^/    /' "$tmp/$case/chromium.log" | tail -20
        fail=1; continue
    fi
    # a PNG of 1200x1600 with more than a blank page's worth of data
    if "$PYTHON" - "$png" <<'PY'
import struct, sys
d = open(sys.argv[1], 'rb').read()
ok = d[:8] == b'\x89PNG\r\n\x1a\n' and d[12:16] == b'IHDR'
w, h = struct.unpack('>II', d[16:24]) if ok else (0, 0)
print("screenshot %dx%d, %d bytes" % (w, h, len(d)))
sys.exit(0 if ok and w >= 1000 and h >= 1000 and len(d) > 30000 else 1)
PY
    then
        echo "ok: $case report rendered"
    else
        echo "FAIL: $case: screenshot is not a non-trivial 1200x1600 PNG"; fail=1
    fi
done

# The sorting script runs: it titles every sortable header, and a click on
# the w header of the observation table puts the smallest w first (seq 11,
# w -1.81 in the fixture; empty w cells sort as text, after the numbers).
sed 's|</body>|<script>document.querySelector("table.cn-obs th:nth-child(11)").click();</script></body>|' \
    "$tmp/small/report.html" >"$tmp/small/clicked.html"
timeout 120 "$CHROMIUM" --headless --no-sandbox --disable-gpu \
    --disable-background-networking --disable-component-update --disable-sync \
    --no-first-run --user-data-dir="$(mktemp -d -p "$tmp")" --dump-dom \
    "file://$tmp/small/clicked.html" >"$tmp/small/dom.html" 2>"$tmp/small/dom.log"
if "$PYTHON" - "$tmp/small/dom.html" <<'PY'
import re, sys
d = open(sys.argv[1], encoding='utf-8').read()
titled = d.count('title="click to sort"')
body = d.split('cn-sort cn-obs', 1)[1].split('<tbody>', 1)[1]
first = re.search(r'<tr[^>]*><td[^>]*>(\d+)</td>', body)
print("sortable headers titled: %d; first row after sorting by w: seq %s"
      % (titled, first.group(1) if first else "?"))
sys.exit(0 if titled >= 40 and first and first.group(1) == "11" else 1)
PY
then
    echo "ok: tables sort"
else
    echo "FAIL: the sorting script did not run or sorted wrongly"; fail=1
fi
exit $fail
