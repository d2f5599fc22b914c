#!/usr/bin/env bash
# Regenerates docs/report.png, the README's picture of the report: runs the demo into a temporary
# folder and photographs the top of its report.html with Debian's headless chromium.
# Usage: tools/report-screenshot.sh [HEIGHT_PX]   (default 1800)
set -eu
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
height=${1:-1800}
command -v chromium >/dev/null || { echo "report-screenshot: needs Debian's 'chromium' package" >&2; exit 1; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
"$here/bin/actindex" demo --out "$tmp/demo" >/dev/null
chromium --headless --no-sandbox --disable-gpu --disable-quic --no-first-run --disable-background-networking \
  --disable-component-update --disable-sync --hide-scrollbars --user-data-dir="$tmp/profile" \
  --window-size=1200,"$height" --screenshot="$here/docs/report.png" "file://$tmp/demo/report.html" 2>/dev/null
echo "wrote $here/docs/report.png"
