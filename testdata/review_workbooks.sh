#!/usr/bin/env bash
# Renders the workbooks a clinician is handed, to look at them as pages: the demo's (group),
# one from 'assign' (a second synthetic wave placed with the demo's model) and one from
# 'refresh' (both waves regrouped). Each goes through LibreOffice Calc to PDF and through
# pdftoppm (Debian's poppler-utils) to PNG pages, in the folder given (default ./review).
# Needs soffice and pdftoppm; says so and stops without failing when they are missing.
# All data are synthetic. Run from anywhere: bash testdata/review_workbooks.sh [folder]
set -euo pipefail
cd "$(dirname "$0")/.."
out=$(realpath -m "${1:-review}")
for tool in soffice pdftoppm; do
  if ! command -v "$tool" >/dev/null 2>&1; then
    echo "review_workbooks: SKIPPED: $tool is not installed (Debian: libreoffice-calc, poppler-utils)"
    exit 0
  fi
done
mkdir -p "$out"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/cohortmix" ./cmd/cohortmix
cm="$work/cohortmix"
"$cm" demo --dir "$work/demo" --quiet >/dev/null
"$cm" synth --out "$work/wave2.csv" --participants 60 --windows 1000 --seed 2 --first-id 150 --labels >/dev/null
"$cm" assign --model "$work/demo/demo-model.json" "$work/wave2.csv" --out "$work/assign.xlsx" --quiet >/dev/null
"$cm" refresh --previous "$work/demo/demo-model.json" "$work/demo/demo-cohort.csv" "$work/wave2.csv" --out "$work/refresh.xlsx" --quiet >/dev/null
cp "$work/demo/demo-results.xlsx" "$work/group.xlsx"
for book in group assign refresh; do
  timeout 300 soffice --headless --norestore --convert-to pdf --outdir "$work" "$work/$book.xlsx" >/dev/null 2>&1
  pdftoppm -r 70 -png "$work/$book.pdf" "$out/$book"
  cp "$work/$book.xlsx" "$work/$book.pdf" "$out/"
  echo "review_workbooks: $book: $(ls "$out"/"$book"-*.png | wc -l) pages in $out"
done
