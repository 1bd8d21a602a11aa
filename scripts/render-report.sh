#!/usr/bin/env bash
# Render a nadir HTML report in headless Chromium: a PNG screenshot and, with a third argument, a PDF
# print of it, so a person can look at what a reviewer will see.
#   scripts/render-report.sh REPORT.html OUT.png [OUT.pdf]
# PAPER=A4 or PAPER=Letter prints the PDF on that paper (landscape, as the report asks); without it
# Chromium's default paper is used. HEIGHT sets the screenshot's height in pixels (default 4000).
# With pdftoppm installed, PAGES=DIR also writes each PDF page as DIR/page-N.png to look at.
# Exits 3 when no Chromium is installed (callers treat that as "skipped").
set -euo pipefail
if [ $# -lt 2 ]; then
  echo "usage: $0 REPORT.html OUT.png [OUT.pdf]" >&2
  exit 2
fi
report=$(realpath "$1")
png=$(realpath -m "$2")
pdf=${3:+$(realpath -m "$3")}
browser=${CHROMIUM:-}
if [ -z "$browser" ]; then
  for candidate in chromium chromium-browser google-chrome; do
    if command -v "$candidate" >/dev/null 2>&1; then browser=$(command -v "$candidate"); break; fi
  done
fi
if [ -z "$browser" ]; then
  echo "no chromium found; skipping the render" >&2
  exit 3
fi
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
printed="$report"
if [ -n "${PAPER:-}" ]; then
  case "$PAPER" in A4|Letter) ;; *) echo "PAPER must be A4 or Letter" >&2; exit 2 ;; esac
  # A copy of the report that names the paper; the report itself is not touched.
  printed="$profile/report-$PAPER.html"
  sed "s|</style>|@page { size: $PAPER landscape; }\n</style>|" "$report" > "$printed"
fi
# No network: a self-contained report needs none, and the flags keep Chromium from reaching out.
flags=(--headless --no-sandbox --disable-gpu --disable-quic --no-first-run
  --disable-background-networking --disable-component-update --disable-sync
  --user-data-dir="$profile" --hide-scrollbars)
timeout 120 "$browser" "${flags[@]}" --screenshot="$png" --window-size=1280,"${HEIGHT:-4000}" \
  "file://$report" >/dev/null 2>&1
test -s "$png"
if [ -n "$pdf" ]; then
  timeout 120 "$browser" "${flags[@]}" --no-pdf-header-footer --print-to-pdf="$pdf" "file://$printed" >/dev/null 2>&1
  test -s "$pdf"
  if [ -n "${PAGES:-}" ] && command -v pdftoppm >/dev/null 2>&1; then
    mkdir -p "$PAGES"
    pdftoppm -r 60 -png "$pdf" "$PAGES/page"
  fi
fi
echo "rendered $report"
