#!/bin/sh
# Converts a roadtally workbook to PDF with LibreOffice headless and checks its page setup:
# every page landscape (MediaBox wider than tall). Usage: scripts/workbook-pdf.sh OUT/roadtally.xlsx
# Exits 0 with a message when soffice is not installed.
set -eu
xlsx=${1:?usage: $0 path/to/roadtally.xlsx}
if ! command -v soffice >/dev/null 2>&1; then
    echo "skipped: soffice (LibreOffice) is not installed"
    exit 0
fi
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
soffice --headless --convert-to pdf --outdir "$dir" "$xlsx" >/dev/null
pdf="$dir/$(basename "${xlsx%.*}").pdf"
pages=$(grep -a -c '/Type */Page[^s]' "$pdf" || true)
portrait=$(grep -a -o '/MediaBox *\[[^]]*\]' "$pdf" | awk '{gsub(/[^0-9. ]/," "); n=split($0,a," "); if (a[n] < a[n-1]) p++} END {print p+0}')
echo "$pages pages, $portrait in portrait"
[ "$pages" -gt 0 ] && [ "$portrait" -eq 0 ]
