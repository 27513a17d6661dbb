#!/bin/sh
# Render an HTML job sheet in headless Chromium to a PNG, to look at it.
# Usage: scripts/report-screenshot.sh [SHEET.html] [OUT.png]
# HEIGHT sets the window height in pixels (default 3000).
# Default: the golden job sheet of the demo bring-up session.
# Installs Debian's chromium when it is missing (needs root and apt).
set -eu
here=$(cd "$(dirname "$0")/.." && pwd)
in=${1:-$here/testdata/golden/report/se-6v6-bringup.html}
out=${2:-report.png}
case $in in /*) ;; *) in=$(pwd)/$in ;; esac
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
	apt-get update && apt-get install -y chromium
	browser=$(command -v chromium)
fi
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
"$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
	--disable-background-networking --disable-component-update --disable-sync \
	--user-data-dir="$profile" --screenshot="$out" --window-size=1200,"${HEIGHT:-3000}" "file://$in"
echo "wrote $out"
