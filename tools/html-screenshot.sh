#!/bin/sh
# Renders an HTML file (e.g. a ripline report) in headless Chromium and saves
# a PNG screenshot of its first A4-wide screen, to look at the layout as a
# reader would. Not part of CI. Needs Debian's chromium (apt-get install chromium).
#
#   tools/html-screenshot.sh report.html report.png [height_px]
set -eu
if [ $# -lt 2 ]; then
    echo "usage: $0 FILE.html OUT.png [HEIGHT_PX]" >&2
    exit 2
fi
html=$(realpath "$1")
out=$(realpath -m "$2")
height=${3:-3000}
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
    echo "chromium not found: apt-get install chromium" >&2
    exit 2
fi
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
# 794 px = 210 mm at 96 px per inch: the width of an A4 page
"$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --user-data-dir="$profile" --hide-scrollbars \
    --window-size=794,"$height" --screenshot="$out" "file://$html" 2>/dev/null
test -s "$out"
echo "$out"
