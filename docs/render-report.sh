#!/bin/sh
# render-report.sh OUT [PNG] — draw OUT/report.html as a person's browser
# would, in headless Chromium (Debian package "chromium"), into a PNG, so
# the report can be looked at without opening a browser.
#
#   apt-get install -y chromium
#   go run ./cmd/bandsolve demo --out /tmp/demo
#   docs/render-report.sh /tmp/demo /tmp/demo-report.png
#
# The flags keep Chromium off the network (no background requests, no
# component or sync updates) and give it a throw-away profile, so the
# picture shows only what the self-contained report holds.
set -eu
out=${1:?usage: render-report.sh OUT [PNG]}
png=${2:-$out/report.png}
html=$out/report.html
[ -f "$html" ] || { echo "render-report.sh: $html does not exist (run bandsolve report $out)" >&2; exit 1; }
browser=$(command -v chromium || command -v chromium-browser || true)
[ -n "$browser" ] || { echo "render-report.sh: chromium not found; apt-get install -y chromium" >&2; exit 1; }
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
abs=$(cd "$(dirname "$html")" && pwd)/$(basename "$html")
# A tall window so the whole report, figures included, is on one picture.
height=${HEIGHT:-9000}
"$browser" --headless --no-sandbox --disable-gpu --disable-background-networking \
	--disable-component-update --disable-sync --no-first-run \
	--user-data-dir="$profile" --hide-scrollbars --window-size=1100,"$height" \
	--screenshot="$png" "file://$abs" >/dev/null 2>&1
[ -s "$png" ] || { echo "render-report.sh: chromium wrote no picture" >&2; exit 1; }
echo "$png"
