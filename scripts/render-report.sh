#!/bin/sh
# Render a coldtrace HTML report (--report FILE.html) to a PNG with headless Chromium, to look at it as a
# reader would, or to attach a picture of it somewhere that takes no HTML.
#
#   scripts/render-report.sh REPORT.html OUT.png [WIDTHxHEIGHT]
#
# Needs Chromium (Debian: apt-get install chromium). Nothing else; `cargo test` never calls this.
# The size defaults to 1100x3200 pixels, enough for a report with a few findings; the page is drawn at
# that size, so pass a taller one for a long findings table. The report has no script and no network
# reference, and Chromium is started without networking, sync, component updates or a profile of yours.
# Exit codes: 0 written, 1 nothing or a blank page written, 2 bad use or Chromium missing, otherwise
# Chromium's own.
set -eu

if [ $# -lt 2 ] || [ $# -gt 3 ]; then
    echo "usage: $0 REPORT.html OUT.png [WIDTHxHEIGHT]" >&2
    exit 2
fi
report=$1
out=$2
size=${3:-1100x3200}
case $out in
    *.png) ;;
    *) echo "$0: $out: the picture is written as PNG; give a name ending in .png" >&2; exit 2 ;;
esac
if [ ! -f "$report" ]; then
    echo "$0: $report: no such report; write one with --report $report" >&2
    exit 2
fi
if [ -e "$out" ]; then
    echo "$0: $out exists; remove it or give another name (nothing is overwritten)" >&2
    exit 2
fi
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
    echo "$0: Chromium is not installed; on Debian: apt-get install chromium" >&2
    exit 2
fi
width=${size%x*}
height=${size#*x}
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT INT TERM
abs_report=$(cd "$(dirname "$report")" && pwd)/$(basename "$report")
abs_out=$(cd "$(dirname "$out")" && pwd)/$(basename "$out")
"$browser" --headless --no-sandbox --disable-gpu --no-first-run --disable-background-networking \
    --disable-component-update --disable-sync --hide-scrollbars --user-data-dir="$profile" \
    --window-size="$width,$height" --screenshot="$abs_out" "file://$abs_report" 2>/dev/null
if [ ! -s "$abs_out" ]; then
    echo "$0: Chromium wrote no picture" >&2
    exit 1
fi
# A blank page compresses to a few kilobytes; a report with its plot is hundreds.
bytes=$(wc -c < "$abs_out")
if [ "$bytes" -lt 20000 ]; then
    echo "$0: $out is only $bytes bytes: the page looks blank; open the report in a browser to see why" >&2
    exit 1
fi
echo "$out"
