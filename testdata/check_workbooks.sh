#!/usr/bin/env bash
# Opens the workbooks cohortmix writes in two other programs and fails on any error:
# LibreOffice Calc (Debian's libreoffice-calc) converts each to PDF, and Python's openpyxl
# (Debian's python3-openpyxl) loads each and reads every sheet. It installs both where it can
# (as root with apt-get); where it cannot, it says so and skips, without failing.
set -euo pipefail
cd "$(dirname "$0")/.."

source testdata/install.sh
ensure check_workbooks "command -v soffice && /usr/bin/python3 -c 'import openpyxl'" \
  "LibreOffice (soffice) or python3-openpyxl is not installed and could not be installed here" libreoffice-calc python3-openpyxl || exit 0

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/cohortmix" ./cmd/cohortmix
"$work/cohortmix" demo --dir "$work/demo" --quiet >/dev/null
"$work/cohortmix" demo --dir "$work/pam" --method pam-aitchison --quiet >/dev/null
# Past 2,000 participants the participants sheet is streamed; check that form too.
"$work/cohortmix" demo --dir "$work/large" --participants 2100 --windows 150 --states 5 --quiet >/dev/null

fail=0
for book in "$work"/demo/demo-results.xlsx "$work"/pam/demo-results.xlsx "$work"/large/demo-results.xlsx; do
  out="$work/pdf-$(basename "$(dirname "$book")")"
  mkdir -p "$out"
  if ! timeout 300 soffice --headless --norestore --convert-to pdf --outdir "$out" "$book" >"$out/log" 2>&1 || [ ! -s "$out/demo-results.pdf" ]; then
    echo "check_workbooks: FAIL: LibreOffice could not convert $book:"; cat "$out/log"; fail=1
  else
    echo "check_workbooks: ok: LibreOffice converted $(basename "$(dirname "$book")")/demo-results.xlsx to PDF"
  fi
  if ! /usr/bin/python3 - "$book" <<'PY'
import sys, warnings
warnings.simplefilter("error")  # any warning while loading is a failure
import openpyxl
wb = openpyxl.load_workbook(sys.argv[1])
cells = sum(1 for ws in wb.worksheets for row in ws.iter_rows() for c in row if c.value is not None)
assert "Summary" in wb.sheetnames and cells > 0, wb.sheetnames
for ws in wb.worksheets:
    for row in ws.iter_rows():
        for c in row:
            assert c.data_type != "f", f"{ws.title}!{c.coordinate} holds a formula"
# Read-only mode trusts each sheet's <dimension>; it must give every row the full load gives.
ro = openpyxl.load_workbook(sys.argv[1], read_only=True)
for ws in wb.worksheets:
    full = ws.max_row
    streamed = sum(1 for _ in ro[ws.title].iter_rows())
    assert streamed == full and ro[ws.title].max_row == full, f"{ws.title}: read-only mode sees {streamed} rows (dimension {ro[ws.title].calculate_dimension()}), the full load {full}"
print(f"check_workbooks: ok: openpyxl read {len(wb.sheetnames)} sheets, {cells} cells, no formulas; read-only mode sees every row")
PY
  then
    echo "check_workbooks: FAIL: openpyxl could not read $book"; fail=1
  fi
done
exit $fail
