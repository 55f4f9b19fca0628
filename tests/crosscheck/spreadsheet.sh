#!/usr/bin/env bash
# The CSV answer of POST /api/v1/loans/checks opened by a spreadsheet program,
# headless: gnumeric's ssconvert imports it and writes its own workbook (gzipped
# XML, where each cell carries its type: ValueType 40 = number, 60 = text,
# 20 = boolean; a formula would have no value type), then exports it to CSV again.
#
#   bash tests/crosscheck/spreadsheet.sh http://127.0.0.1:18531
#
# Checks that every figure (payments, differences, the APR, the finance charge,
# the line) is read as a number equal to the answer's text, negative differences
# included; that ids made formula-safe with a leading ' are read as text and
# nothing is read as a formula; that an id over two lines stays one text cell; and
# that the figures survive the export back to CSV. Installs gnumeric from Debian's
# packages when ssconvert is missing (as root, as CI runs). Ends with
# `spreadsheet: N passed, M failed`; exits 1 if any check failed.
set -euo pipefail

if [[ $# -lt 1 ]]; then
    echo "usage: $0 BASE_URL" >&2
    exit 2
fi
base="${1%/}"
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
py="$root/.venv/bin/python"
[[ -x "$py" ]] || py=python3

if ! command -v ssconvert >/dev/null 2>&1; then
    echo "spreadsheet: installing gnumeric for ssconvert" >&2
    export DEBIAN_FRONTEND=noninteractive
    apt-get install -y --no-install-recommends gnumeric >/dev/null 2>&1 \
        || { apt-get update >/dev/null && apt-get install -y --no-install-recommends gnumeric >/dev/null; } \
        || { echo "spreadsheet: could not install gnumeric (ssconvert)" >&2; exit 1; }
fi

work="$(mktemp -d -t residue-spreadsheet.XXXXXX)"
trap 'rm -rf "$work"' EXIT

"$py" - "$base" "$work" <<'PYTHON'
import csv
import gzip
import io
import math
import subprocess
import sys
import urllib.error
import urllib.request
import xml.etree.ElementTree as ET
from decimal import Decimal
from fractions import Fraction

base, work = sys.argv[1], sys.argv[2]
NUMBER_COLUMNS = [
    "line", "computed_payment", "quoted_payment", "payment_difference", "apr_percent",
    "quoted_apr_percent", "apr_difference_points", "apr_tolerance_points", "finance_charge",
    "quoted_finance_charge", "finance_charge_difference", "finance_charge_tolerance",
]
BOOLEAN_COLUMNS = ["payment_matches", "apr_within_tolerance", "finance_charge_within_tolerance"]
NUMBER_TYPE, TEXT_TYPE, BOOLEAN_TYPE = "40", "60", "20"
passed = failed = 0


def check(what, ok, detail=""):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print(f"FAIL  {what}: {detail}", flush=True)


def payment(principal, rate_percent, n):
    """Exact-fraction annuity payment rounded half up to the cent (the reference of
    crosscheck.py's check_loan and pipeline.py): principal·i/(1 − (1 + i)^−n), i = rate/1200."""
    i = Fraction(rate_percent) / 1200
    exact = Fraction(principal) * i / (1 - (1 + i) ** -n)
    c = math.floor(exact * 100 + Fraction(1, 2))
    return f"{c // 100}.{c % 100:02d}"


# Invented loans. Quoted payments from the reference; some off on purpose so that
# the differences are negative and positive numbers.
p1 = payment("10000", "5", 36)
p2 = payment("18500", "8.49", 72)
p3 = payment("250000", "6", 360)
rows = [
    ("=1+1", "10000", "5", "36", p1, "", "", ""),
    ("@SUM(A1:A2)", "10000", "5", "36", p1, "5", "", ""),
    ("-x", "10000", "5", "36", str(Decimal(p1) - 1), "", "", ""),          # payment quoted 1.00 under
    ("+x", "18500", "8.49", "72", p2, "8.2", "395", "5000"),              # APR under, finance charge under
    ("-42", "18500", "8.49", "72", str(Decimal(p2) + Decimal("0.01")), "9.5", "395", "6000"),
    ("Larkspur, unit 4\nsecond line", "250000", "6", "360", p3, "6.05", "", ""),
    ("plain", "250000", "6", "360", "", "", "", ""),
    ("not a loan", "twelve thousand", "6", "360", "", "", "", ""),
]
header = ["id", "principal", "annual_rate_percent", "term_months", "quoted_payment",
          "quoted_apr_percent", "prepaid_finance_charges.origination", "quoted_finance_charge"]
buf = io.StringIO()
csv.writer(buf, lineterminator="\r\n").writerows([header] + [list(r) for r in rows])
req = urllib.request.Request(base + "/api/v1/loans/checks", data=buf.getvalue().encode(),
                             headers={"Content-Type": "text/csv"}, method="POST")
try:
    with urllib.request.urlopen(req, timeout=120) as r:
        status, body = r.status, r.read()
except urllib.error.HTTPError as e:
    status, body = e.code, e.read()
check("POST /api/v1/loans/checks answers 200", status == 200, f"HTTP {status}: {body[:300]!r}")
if status != 200:
    print(f"spreadsheet: {passed} passed, {failed} failed")
    sys.exit(1)
answer = body.decode("utf-8")
table = list(csv.reader(io.StringIO(answer.lstrip("\ufeff"), newline="")))
columns = table[0]
data = table[1:]
check("the answer has one row per input row", len(data) == len(rows), f"{len(data)} rows")
with open(f"{work}/answer.csv", "w", encoding="utf-8", newline="") as f:
    f.write(answer)

# The spreadsheet program's import, and its export back to CSV.
for args in (["answer.csv", "answer.gnumeric"], ["answer.gnumeric", "again.csv"]):
    run = subprocess.run(["ssconvert", *args], cwd=work, capture_output=True, text=True)
    check(f"ssconvert {' '.join(args)}", run.returncode == 0, run.stderr[-500:])
    if run.returncode != 0:
        print(f"spreadsheet: {passed} passed, {failed} failed")
        sys.exit(1)

tree = ET.fromstring(gzip.open(f"{work}/answer.gnumeric").read())
ns = {"gnm": "http://www.gnumeric.org/v10.dtd"}
cells = {}
for c in tree.iterfind(".//gnm:Sheet/gnm:Cells/gnm:Cell", ns):
    cells[(int(c.get("Row")), int(c.get("Col")))] = c
check("the workbook holds every row", max(r for r, _ in cells) == len(data), f"last row {max(r for r, _ in cells)}")
no_type = [(k, c.text) for k, c in cells.items() if c.get("ValueType") is None or c.get("ExprID") is not None]
check("no cell is read as a formula", not no_type, f"{no_type[:5]}")

numbers = 0
for r, rec in enumerate(data, start=1):
    for col, name in enumerate(columns):
        text = rec[col]
        cell = cells.get((r, col))
        where = f"row {r} ({rec[0]!r}) {name}"
        if text == "":
            check(f"{where}: an empty cell stays empty", cell is None or (cell.text or "") == "", f"{cell.text if cell is not None else None!r}")
            continue
        if cell is None:
            check(f"{where}: the cell is there", False, f"text {text!r}")
            continue
        vtype = cell.get("ValueType")
        if name in NUMBER_COLUMNS:
            ok = vtype == NUMBER_TYPE
            if ok:
                got, want = float(cell.text), Decimal(text)
                # The spreadsheet holds binary floating point: equal to the text within 1e-12 relative.
                ok = abs(Decimal(repr(got)) - want) <= Decimal("1e-12") * max(Decimal(1), abs(want))
            check(f"{where}: {text!r} is read as that number", ok, f"ValueType {vtype}, value {cell.text!r}")
            numbers += 1
        elif name in BOOLEAN_COLUMNS:
            check(f"{where}: {text!r} is read as a boolean", vtype == BOOLEAN_TYPE and cell.text.lower() == text,
                  f"ValueType {vtype}, value {cell.text!r}")
        elif name == "id" and text.startswith("'"):
            # The ' keeps the text a text: the program shows it without the mark, or with it.
            check(f"{where}: the '-prefixed id {text!r} is read as text", vtype == TEXT_TYPE and cell.text in (text, text[1:]),
                  f"ValueType {vtype}, value {cell.text!r}")
        elif name in ("id", "status", "reason", "check_url") and not text.lstrip("-").replace(".", "", 1).isdigit():
            check(f"{where}: text stays that text", vtype == TEXT_TYPE and cell.text == text, f"ValueType {vtype}, value {cell.text!r}")

computed = [rec[columns.index("computed_payment")] for rec in data if rec[columns.index("status")] != "error"]
check("computed_payment is there for every row that is not an error", all(computed) and len(computed) == len(rows) - 1, f"{computed}")
prefixed = [rec[0] for rec in data if rec[0].startswith("'")]
check("formula-like ids came back prefixed with '", sorted(prefixed) == sorted(["'=1+1", "'@SUM(A1:A2)", "'-x", "'+x"]), f"{prefixed}")
negative = [rec[columns.index("payment_difference")] for rec in data if rec[columns.index("payment_difference")].startswith("-")]
check("a negative difference is in the file, not prefixed", negative == ["-1.00"], f"{negative}")

# The export back to CSV: the figures are the same numbers.
again = list(csv.reader(open(f"{work}/again.csv", encoding="utf-8", newline="")))
check("the export has the header and every row", len(again) == len(table), f"{len(again)} records")
for r, (rec, back) in enumerate(zip(data, again[1:]), start=1):
    for name in NUMBER_COLUMNS:
        col = columns.index(name)
        a, b = rec[col], back[col] if col < len(back) else None
        if a == "":
            check(f"export row {r} {name}: stays empty", b in ("", None), f"{b!r}")
            continue
        try:
            ok = abs(Decimal(b) - Decimal(a)) <= Decimal("1e-12") * max(Decimal(1), abs(Decimal(a)))
        except Exception:  # noqa: BLE001 - anything unreadable is a failure
            ok = False
        check(f"export row {r} {name}: {a} comes back as the same number", ok, f"{b!r}")

print(f"      {numbers} figure cells read as numbers")
print(f"spreadsheet: {passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
PYTHON
