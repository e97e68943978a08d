#!/usr/bin/env bash
# Checks a rendered basefit matrix page in headless Chromium: one cell per (package, image),
# the family and outcome filters, the detail panel by mouse and keyboard, no network loads,
# no script errors; writes page.png and page-narrow.png into OUTDIR.
#
#   tests/browser/run.sh PAGE.html OUTDIR
#
# Exit 0 on pass, 1 on failure. Without Chromium it says so and exits 0, so machines without a
# browser still run the rest of the suite (install it with: apt-get install -y chromium).
set -uo pipefail
if [ $# -ne 2 ]; then
  echo "usage: $0 PAGE.html OUTDIR" >&2
  exit 2
fi
page="$1"
out="$2"
if [ ! -f "$page" ]; then
  echo "browser check: no page at $page" >&2
  exit 1
fi
browser=""
for candidate in chromium chromium-browser; do
  if command -v "$candidate" >/dev/null 2>&1; then
    browser="$(command -v "$candidate")"
    break
  fi
done
if [ -z "$browser" ]; then
  echo "browser check skipped: chromium not installed (apt-get install -y chromium)"
  exit 0
fi
if ! command -v node >/dev/null 2>&1; then
  echo "browser check skipped: node not installed"
  exit 0
fi
here="$(cd "$(dirname "$0")" && pwd)"
# Node 20 and 21 keep WebSocket behind a flag; later versions have it and ignore nothing.
flags=()
if [ "$(node -e 'console.log(typeof WebSocket)')" != "function" ]; then
  flags=(--experimental-websocket)
fi
node "${flags[@]}" --no-warnings "$here/check-page.mjs" "$page" "$out" "$browser"
status=$?
if [ $status -eq 0 ]; then
  exit 0
fi
exit 1
