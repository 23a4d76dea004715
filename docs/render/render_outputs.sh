#!/usr/bin/env bash
# Render what balancer writes for every bundled sample, to look at it as a designer would:
# the revised workbook and the PDF of each sample, the workbook printed to PDF by LibreOffice,
# and every page of both as PNGs.
#
#   bash docs/render/render_outputs.sh OUT_DIR [DPI]
#
# Needs libreoffice (Debian: libreoffice-calc) and pdftoppm (Debian: poppler-utils). The
# clinic sample (a panel in service with clamp readings) is balanced with --basis measured.
set -euo pipefail

out=${1:?usage: render_outputs.sh OUT_DIR [DPI]}
dpi=${2:-60}
here=$(cd "$(dirname "$0")/../.." && pwd)
balancer=${BALANCER:-"$here/.venv/bin/balancer"}
mkdir -p "$out"

for sample in "$here"/sample_schedules/*.xlsx "$here"/sample_schedules/*.csv; do
    stem=$(basename "${sample%.*}")
    extra=()
    case "$stem" in
        clinic-*) extra=(--basis measured) ;;
    esac
    echo "== $stem"
    "$balancer" balance "$sample" -o "$out/$stem-balanced.xlsx" --pdf "$out/$stem-balanced.pdf" \
        --time-limit 20 --no-color "${extra[@]}" > "$out/$stem.txt"
    # The workbook as it prints (LibreOffice honours its page setup, headers and footers).
    libreoffice --headless --convert-to pdf --outdir "$out/sheets" "$out/$stem-balanced.xlsx" \
        > /dev/null 2>&1
    pdftoppm -png -r "$dpi" "$out/$stem-balanced.pdf" "$out/$stem-pdf"
    pdftoppm -png -r "$dpi" "$out/sheets/$stem-balanced.pdf" "$out/$stem-sheets"
done
echo "PNGs in $out: <sample>-pdf-N.png (the PDF), <sample>-sheets-N.png (the workbook printed)"
