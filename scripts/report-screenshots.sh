#!/usr/bin/env bash
# Screenshots of the demo report for a person to look at: the first screen at desktop and
# phone widths, the whole page, and the printed PDF. Needs Debian's chromium.
#   scripts/report-screenshots.sh [OUT_DIR]      (default: target/report-screenshots)
set -euo pipefail
cd "$(dirname "$0")/.."
out="${1:-target/report-screenshots}"
mkdir -p "$out"
out="$(cd "$out" && pwd)"
cargo run --release --quiet -- demo --out "$out/demo" >/dev/null
page="file://$out/demo/report.html"
chrome() {
  chromium --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --hide-scrollbars --user-data-dir="$(mktemp -d)" "$@" "$page" 2>/dev/null
}
chrome --window-size=1280,900 --screenshot="$out/desktop-first-screen.png"
chrome --window-size=412,915 --screenshot="$out/phone-first-screen.png"
chrome --window-size=1280,16000 --screenshot="$out/desktop-long.png"
chrome --no-pdf-header-footer --print-to-pdf="$out/report.pdf"
echo "screenshots and PDF in $out (the report itself: $out/demo/report.html)"
