#!/usr/bin/env python3
"""Pipeline test of `POST /api/v1/loans/checks`: a 20,000-row CSV of loan quotes
checked in one request, the answer read back row by row.

What it does:

* generates (seeded, so every run is the same) 20,000 invented level-payment
  monthly loans with their quotes: principal, annual_rate_percent, term_months,
  quoted_payment, quoted_apr_percent, a prepaid charge column
  (`prepaid_finance_charges.origination`), some with quoted_finance_charge;
* plants defects at known rows: payments off by 0.01 and by 1.00, APRs off by
  0.126 points (`differs`) and by 0.124 points (`ok`: a regular transaction's
  tolerance is 0.125, 12 CFR 1026.22(a)(2)), finance charges just inside and
  just outside the tolerances of 12 CFR 1026.18(d), words for numbers, rows with
  too many or too few cells, a bad date (2027-02-30), an unknown currency (XYZ),
  thousands separators in quoted cells (good and bad groupings), ids over two
  lines;
* computes each correct payment, final payment, finance charge and APR with the
  exact-fraction reference below, never with Residue, so that the expected
  status of every row is known before the file is posted;
* posts the file twice (CSV answer, NDJSON answer) and checks the ids (in
  order, none lost or repeated), the `line` numbers, `residue-rows`, every
  row's status and figures against the reference, and the two answers against
  each other;
* compares a sample (every 50th row and every planted row) field by field with
  the single check `GET /api/v1/loans/check`, and the row's `check_url` with
  the same check;
* posts edge files: semicolon-separated with a byte-order mark (and a
  spreadsheet's empty row and a blank line, which are no rows), quoted cells
  with commas, quotes and line breaks, thousands separators, a header-only file,
  an empty file, unknown / duplicate / missing columns, formula-like ids (a
  tab, quoted and not), exactly 100,000 rows, 100,001 rows (413) and a 40 MiB
  file (413).

A row with more or fewer cells than the header has columns is a row error
(a wrong column count), with its id kept; ids come back exactly as sent
(RFC 4180: spaces and tabs are part of a field), with only the formula-safety
"'" added in the CSV answer.

The reference (exact-fraction ledger, Python `fractions` and integers):

* payment: P = principal·i / (1 − (1 + i)^−n) with i = rate/1200 as a Fraction
  (principal/n at 0 %), rounded half up to the cent: crosscheck.py's
  `check_loan` "payment vs exact annuity formula" and its `cents`, here in
  integer cents;
* ledger: each month interest = balance × i rounded half up to the cent,
  exactly (integer arithmetic on the Fraction's numerator and denominator),
  the final payment = the last balance plus its interest: crosscheck.py's
  "interest = balance × exact rate" rule;
* finance charge = total of payments − principal + prepaid charges, amount
  financed = principal − prepaid charges (12 CFR 1026.18(b), (d));
* APR: the root of the Appendix J equation (12 CFR 1026 Appendix J (b)(8)) for
  an advance of the amount financed and the posted payments one month apart:
  A·(1+i)^n = P·((1+i)^n − (1+i))/i + F. A 50-digit decimal root is found by
  bracketing (Python `decimal`); for every planted APR row and every sampled
  row it is certified exactly: the equation is evaluated in Fractions at the
  root ∓ 1e-15 points and must change sign there.

Usage: python tests/crosscheck/pipeline.py http://127.0.0.1:18531
       (or --base-url URL). Prints failures (at most 20 per kind), one line per
section, and ends with `pipeline: N passed, M failed`; exits 1 if any check
failed. Standard library only.
"""

from __future__ import annotations

import argparse
import csv
import io
import json
import math
import random
import re
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from collections import Counter
from decimal import Decimal, localcontext
from fractions import Fraction

SEED = 20270215
ROWS = 20_000
MAX_ROWS = 100_000

ANSWER_COLUMNS = [
    "id", "line", "status", "computed_payment", "quoted_payment", "payment_difference",
    "payment_matches", "apr_percent", "quoted_apr_percent", "apr_difference_points",
    "apr_tolerance_points", "apr_within_tolerance", "finance_charge", "quoted_finance_charge",
    "finance_charge_difference", "finance_charge_tolerance", "finance_charge_within_tolerance",
    "reason", "check_url",
]
FIGURES = [
    "computed_payment", "quoted_payment", "payment_difference", "apr_percent",
    "quoted_apr_percent", "apr_difference_points", "apr_tolerance_points", "finance_charge",
    "quoted_finance_charge", "finance_charge_difference", "finance_charge_tolerance",
]
BOOLEANS = ["payment_matches", "apr_within_tolerance", "finance_charge_within_tolerance"]
INPUT_COLUMNS = [
    "id", "principal", "annual_rate_percent", "term_months", "quoted_payment",
    "quoted_apr_percent", "prepaid_finance_charges.origination", "quoted_finance_charge",
    "mortgage", "currency", "funding_date", "first_payment_date",
]
NUMERIC_COLUMNS = {
    "principal", "annual_rate_percent", "term_months", "quoted_payment", "quoted_apr_percent",
    "prepaid_finance_charges.origination", "quoted_finance_charge",
}
# A number as the JSON API writes one; a cell that starts with a formula
# character must be such a number, or be prefixed with "'" (the contract).
NUMBER = re.compile(r"^-?[0-9]+(\.[0-9]+)?$")
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
KNOWN_COLUMNS_SAMPLE = ["principal", "annual_rate_percent", "quoted_apr_percent", "prepaid_finance_charges"]


# --------------------------------------------------------------------------
# Reporting: every failure is collected, none stops the run.
# --------------------------------------------------------------------------


class Report:
    SHOWN = 20

    def __init__(self):
        self.passed = 0
        self.failed = 0
        self.shown = Counter()

    def check(self, kind: str, ok: bool, detail: str = "") -> bool:
        if ok:
            self.passed += 1
        else:
            self.failed += 1
            self.shown[kind] += 1
            if self.shown[kind] <= self.SHOWN:
                print(f"FAIL  {kind}: {detail}", flush=True)
            elif self.shown[kind] == self.SHOWN + 1:
                print(f"FAIL  {kind}: (further failures of this kind not shown)", flush=True)
        return ok

    def section(self, name: str, before: tuple[int, int]):
        p, f = self.passed - before[0], self.failed - before[1]
        print(f"{'ok   ' if f == 0 else 'FAIL '} {name}: {p} checks passed, {f} failed", flush=True)

    def mark(self) -> tuple[int, int]:
        return (self.passed, self.failed)


# --------------------------------------------------------------------------
# HTTP (standard library)
# --------------------------------------------------------------------------


class Answer:
    def __init__(self, status: int, headers, body: bytes):
        self.status = status
        self.headers = headers
        self.body = body

    def header(self, name: str) -> str | None:
        return self.headers.get(name) if self.headers is not None else None

    @property
    def ctype(self) -> str:
        return self.header("Content-Type") or ""


def http(base: str, method: str, path: str, body: bytes | None = None,
         headers: dict | None = None, timeout: float = 900) -> Answer:
    req = urllib.request.Request(base + path, data=body, headers=headers or {}, method=method)
    try:
        with urllib.request.urlopen(req, timeout=timeout) as r:
            return Answer(r.status, r.headers, r.read())
    except urllib.error.HTTPError as e:
        return Answer(e.code, e.headers, e.read())


def post_csv(base: str, text: str | bytes, accept: str | None = None) -> Answer:
    data = text.encode("utf-8") if isinstance(text, str) else text
    headers = {"Content-Type": "text/csv"}
    if accept:
        headers["Accept"] = accept
    return http(base, "POST", "/api/v1/loans/checks", data, headers)


def single_check(base: str, query: dict) -> Answer:
    return http(base, "GET", "/api/v1/loans/check?" + urllib.parse.urlencode(query), timeout=60)


# --------------------------------------------------------------------------
# The exact-fraction reference (see the module's docstring for its sources)
# --------------------------------------------------------------------------


def cents_text(c: int) -> str:
    """Integer cents as a plain decimal with two places: -100 -> "-1.00"."""
    sign = "-" if c < 0 else ""
    c = abs(c)
    return f"{sign}{c // 100}.{c % 100:02d}"


def half_up_cents(x: Fraction) -> int:
    """x ≥ 0 rounded half up to whole cents, exactly (crosscheck.py's `cents`)."""
    return math.floor(x * 100 + Fraction(1, 2))


def level_loan(principal_c: int, rate: Fraction, n: int):
    """(payment, final payment) in cents of the exact-fraction ledger, or None when
    the balance would end before the n-th payment (such loans are not generated)."""
    i = rate / 1200
    if i == 0:
        P = half_up_cents(Fraction(principal_c, 100 * n))
    else:
        P = half_up_cents(Fraction(principal_c, 100) * i / (1 - (1 + i) ** -n))
    num, den = i.numerator, i.denominator
    B = principal_c
    for _ in range(1, n):
        B = B + (2 * B * num + den) // (2 * den) - P  # interest half up to the cent, exactly
        if B <= 0:
            return None
    F = B + (2 * B * num + den) // (2 * den)
    return P, F


def appendix_j(i: Fraction, A: Fraction, P: Fraction, F: Fraction, n: int) -> Fraction:
    """The Appendix J equation times (1+i)^n, exactly: positive below the root."""
    a = 1 + i
    an = a**n
    return P * (an - a) / i + F - A * an


def apr_root(A_c: int, P_c: int, F_c: int, n: int) -> Decimal:
    """The APR in percent, a 50-digit decimal root of the Appendix J equation."""
    if P_c * (n - 1) + F_c == A_c:
        return Decimal(0)
    with localcontext() as ctx:
        ctx.prec = 50
        A, P, F = Decimal(A_c) / 100, Decimal(P_c) / 100, Decimal(F_c) / 100

        def h(i):
            a = 1 + i
            an = a**n
            return P * (an - a) / i + F - A * an

        def dh(i):
            a = 1 + i
            an1 = a ** (n - 1)
            an = an1 * a
            return P * ((n * an1 - 1) / i - (an - a) / (i * i)) - A * n * an1

        # Newton from the nominal rate (quadratic: a handful of steps), checked by the
        # bracket below when it fails to settle.
        i = 2 * Decimal(max(P_c * (n - 1) + F_c - A_c, 1)) / (Decimal(A_c) * (n + 1))  # the constant-ratio estimate
        for _ in range(60):
            step = h(i) / dh(i)
            i -= step
            if i <= 0:
                break
            if abs(step) < Decimal("1e-45"):
                return i * 1200
        lo, hi = Decimal("1e-12"), Decimal("0.05")
        hlo, hhi = h(lo), h(hi)
        while hhi > 0:  # an APR above 60 %: widen the bracket
            lo, hlo, hi = hi, hhi, hi * 2
            hhi = h(hi)
        for _ in range(400):  # Illinois false position
            m = hi - hhi * (hi - lo) / (hhi - hlo)
            hm = h(m)
            if hm == 0:
                lo = hi = m
                break
            if (hm > 0) == (hhi > 0):
                hi, hhi = m, hm
                hlo /= 2
            else:
                lo, hlo = m, hm
                hhi /= 2
            if hi - lo < Decimal("1e-42"):
                break
        return (lo + hi) / 2 * 1200


def certify_apr(apr: Decimal, A_c: int, P_c: int, F_c: int, n: int) -> bool:
    """Exact-fraction certificate: the equation changes sign between apr ∓ 1e-15 points."""
    if apr == 0:
        return P_c * (n - 1) + F_c == A_c
    A, P, F = Fraction(A_c, 100), Fraction(P_c, 100), Fraction(F_c, 100)
    eps = Fraction(1, 10**15)
    lo = (Fraction(apr) - eps) / 1200
    hi = (Fraction(apr) + eps) / 1200
    return appendix_j(lo, A, P, F, n) > 0 > appendix_j(hi, A, P, F, n)


def round2_half_up(x: Decimal) -> Decimal:
    with localcontext() as ctx:
        ctx.prec = 60
        return x.quantize(Decimal("0.01"), rounding="ROUND_HALF_UP")


def with_thousands(text: str) -> str:
    """"250000.00" -> "250,000.00"."""
    whole, _, frac = text.partition(".")
    grouped = f"{int(whole):,}"
    return grouped + ("." + frac if frac else "")


def rate_text(thousandths: int) -> str:
    t = f"{thousandths // 1000}.{thousandths % 1000:03d}".rstrip("0").rstrip(".")
    return t


# --------------------------------------------------------------------------
# Rows
# --------------------------------------------------------------------------


class Row:
    """One generated row: its cells as sent, what the reference expects of it,
    and the single-check query that asks the same (None where none can)."""

    def __init__(self, rid: str, kind: str):
        self.id = rid
        self.kind = kind
        self.cells: dict[str, str] = {}
        self.quoted: set[str] = set()  # columns written in quotes
        self.raw_line: list[str] | None = None  # a row with a wrong cell count
        self.status = "ok"
        self.error_fields: list[str] = []  # fields the reason must name (errors)
        self.ref: dict | None = None
        self.query: dict | None = None
        self.line = 0

    def query_from_cells(self):
        q = {}
        charges = []
        for col, v in self.cells.items():
            if col == "id" or v == "":
                continue
            if col in NUMERIC_COLUMNS and col in self.quoted:
                v = v.replace(",", "")
            if col.startswith("prepaid_finance_charges."):
                charges.append(f"{col.split('.', 1)[1]}:{v}")
            else:
                q[col] = v
        if charges:
            q["prepaid_finance_charges"] = ",".join(charges)
        self.query = q


def make_loan(rng: random.Random, row: Row, size: str = "any", mortgage=None):
    """Fills an invented level-payment monthly loan with correct quotes."""
    while True:
        if size == "small":
            principal_c = rng.randint(30_000, 95_000)
            term = rng.choice([6, 9, 12, 18, 24])
        else:
            band = rng.random()
            if band < 0.25:
                principal_c = rng.randint(50_000, 2_500_000)
            elif band < 0.7:
                principal_c = rng.randint(2_500_000, 15_000_000)
            else:
                principal_c = rng.randint(15_000_000, 95_000_000)
            if rng.random() < 0.3:
                principal_c -= principal_c % 10_000  # whole hundreds now and then
            term = rng.choice([12, 24, 36, 48, 60, 72, 84, 120, 180, 240, 300, 360, rng.randint(6, 360)])
        if size == "zero":
            rate_k = 0
        else:
            rate_k = rng.choice([rng.randint(1, 24_990), rng.randint(20, 100) * 125, rng.randint(1_000, 9_000)])
        rate = Fraction(rate_k, 1000)
        ledger = level_loan(principal_c, rate, term)
        if ledger is None:
            continue
        P, F = ledger
        if P <= 100 or F <= 0:
            continue
        fee_c = 0
        if size == "small":
            fee_c = rng.choice([0, rng.randint(500, 2_500)])
        elif rng.random() < 0.65:
            fee_c = principal_c * rng.randint(5, 30) // 1000
        break
    A_c = principal_c - fee_c
    total_c = P * (term - 1) + F
    fc_c = total_c - principal_c + fee_c
    apr = apr_root(A_c, P, F, term)
    row.ref = {
        "principal_c": principal_c, "rate": rate, "n": term, "P": P, "F": F, "fee_c": fee_c,
        "A": A_c, "FC": fc_c, "apr": apr,
    }
    row.cells["principal"] = cents_text(principal_c) if principal_c % 100 or rng.random() < 0.5 else str(principal_c // 100)
    row.cells["annual_rate_percent"] = rate_text(rate_k)
    row.cells["term_months"] = str(term)
    if fee_c:
        row.cells["prepaid_finance_charges.origination"] = cents_text(fee_c)
    if rng.random() < 0.92:
        row.cells["quoted_payment"] = cents_text(P)
    if rng.random() < 0.9:
        row.cells["quoted_apr_percent"] = str(round2_half_up(apr))
    if mortgage is None:
        mortgage = rng.choice([None, None, "true", "false"])
    if mortgage is not None:
        row.cells["mortgage"] = mortgage
    if rng.random() < 0.4:
        row.cells["quoted_finance_charge"] = cents_text(fc_c)
    if rng.random() < 0.1:
        row.cells["currency"] = "USD"


def fc_tolerance(row: Row) -> tuple[int, str]:
    """(tolerance in cents, rule) by 12 CFR 1026.18(d)(1)/(2)."""
    if row.cells.get("mortgage", "true") == "true":
        return 10_000, "mortgage"
    return (500, "other") if row.ref["A"] <= 100_000 else (1_000, "other")


PLANTED = [
    # (kind, count, expected status)
    ("pay+0.01", 25, "differs"), ("pay-0.01", 25, "differs"),
    ("pay+1.00", 25, "differs"), ("pay-1.00", 25, "differs"),
    ("apr+0.126", 25, "differs"), ("apr-0.126", 25, "differs"),
    ("apr+0.124", 25, "ok"), ("apr-0.124", 25, "ok"),
    ("fc-mortgage-100.00", 15, "ok"), ("fc-mortgage-100.01", 15, "differs"),
    ("fc-mortgage+750.00", 10, "ok"),
    ("fc-large+10.00", 15, "ok"), ("fc-large-10.01", 15, "differs"), ("fc-large+10.01", 10, "differs"),
    ("fc-small+5.00", 10, "ok"), ("fc-small-5.01", 10, "differs"), ("fc-small+5.01", 10, "differs"),
    ("word-principal", 10, "error"), ("word-term", 10, "error"), ("word-apr", 10, "error"),
    ("extra-cell", 10, "error"), ("missing-cells", 10, "error"),
    ("bad-date", 10, "error"), ("currency-xyz", 10, "error"), ("two-errors", 5, "error"),
    ("thousands-ok", 20, "ok"), ("thousands-int-ok", 10, "ok"),
    ("thousands-bad-grouping", 10, "error"), ("thousands-decimal-comma", 10, "error"),
    ("eur", 20, "ok"), ("multiline-id", 20, "ok"), ("zero-rate", 10, "ok"),
]


def plant(rng: random.Random, row: Row, kind: str):
    """Makes `row` a loan with the defect `kind`."""
    size = "small" if kind.startswith("fc-small") else "zero" if kind == "zero-rate" else "any"
    mortgage = "false" if kind.startswith(("fc-small", "fc-large")) else ("true" if kind.startswith("fc-mortgage") else None)
    while True:
        row.cells = {}
        make_loan(rng, row, size, mortgage)
        r = row.ref
        if kind.startswith("apr") and r["rate"] < 1:
            continue  # keep planted APRs well above zero
        if kind.startswith("fc-large") and r["A"] <= 100_000:
            continue
        if kind.startswith("fc-small") and r["A"] > 100_000:
            continue
        if kind.startswith("fc-") and r["FC"] < 2_000:
            continue  # a quote 10.01 below must stay positive
        if kind in ("thousands-ok", "thousands-int-ok") and r["principal_c"] < 100_000:
            continue  # at least 1,000 so that there is a group
        if kind == "thousands-int-ok" and r["principal_c"] % 100:
            continue
        break
    r = row.ref
    if kind.startswith("pay"):
        delta = {"pay+0.01": 1, "pay-0.01": -1, "pay+1.00": 100, "pay-1.00": -100}[kind]
        row.cells["quoted_payment"] = cents_text(r["P"] + delta)
    elif kind.startswith("apr"):
        # The quote is written to 10 decimals, rounded away from the tolerance's
        # boundary so the difference is 0.126 (or 0.124) within 1e-10.
        sign = 1 if kind[3] == "+" else -1
        off = Decimal(kind[4:])
        with localcontext() as ctx:
            ctx.prec = 60
            q = r["apr"] + sign * off
            rounding = "ROUND_CEILING" if (sign > 0) == (off > Decimal("0.125")) else "ROUND_FLOOR"
            row.cells["quoted_apr_percent"] = str(q.quantize(Decimal("1e-10"), rounding=rounding))
        r["certify"] = True
    elif kind.startswith("fc-"):
        delta_c = round(Decimal(kind.split("+")[-1] if "+" in kind else "-" + kind.split("-")[-1]) * 100)
        row.cells["quoted_finance_charge"] = cents_text(r["FC"] + int(delta_c))
    elif kind == "word-principal":
        row.cells["principal"] = "twelve thousand"
        row.error_fields = ["principal"]
    elif kind == "word-term":
        row.cells["term_months"] = "thirty"
        row.error_fields = ["term_months"]
    elif kind == "word-apr":
        row.cells["quoted_apr_percent"] = "seven and a half"
        row.error_fields = ["quoted_apr_percent"]
    elif kind == "bad-date":
        row.cells["funding_date"] = "2027-02-30"
        row.cells["first_payment_date"] = "2027-04-01"
        row.error_fields = ["funding_date"]
    elif kind == "currency-xyz":
        row.cells["currency"] = "XYZ"
        row.error_fields = ["currency"]
    elif kind == "two-errors":
        row.cells["principal"] = "lots"
        row.cells["currency"] = "XYZ"
        row.error_fields = ["principal", "currency"]
    elif kind == "thousands-ok":
        # Quoted cells grouped by three with a decimal point: accepted.
        row.cells["principal"] = with_thousands(cents_text(r["principal_c"]))
        row.quoted.add("principal")
        if "quoted_payment" in row.cells:
            row.cells["quoted_payment"] = with_thousands(row.cells["quoted_payment"])
            row.quoted.add("quoted_payment")
        if "quoted_finance_charge" in row.cells:
            row.cells["quoted_finance_charge"] = with_thousands(row.cells["quoted_finance_charge"])
            row.quoted.add("quoted_finance_charge")
    elif kind == "thousands-int-ok":
        # Whole units grouped by three without a decimal point: accepted in a comma-separated file.
        row.cells["principal"] = with_thousands(str(r["principal_c"] // 100))
        row.quoted.add("principal")
    elif kind == "thousands-bad-grouping":
        # "12,34,567.00": groups not of three: a row error.
        digits = str(r["principal_c"] // 100).ljust(6, "5")
        row.cells["principal"] = f"{digits[:-5]},{digits[-5:-3]},{digits[-3:]}.00"
        row.quoted.add("principal")
        row.error_fields = ["principal"]
    elif kind == "thousands-decimal-comma":
        # "1.684,30" (or "684,30"): a decimal comma: a row error.
        P = r["P"]
        row.cells["quoted_payment"] = f"{P // 100:,}".replace(",", ".") + f",{P % 100:02d}"
        row.quoted.add("quoted_payment")
        row.error_fields = ["quoted_payment"]
    elif kind == "eur":
        row.cells["currency"] = "EUR"
        row.cells.pop("quoted_finance_charge", None)
    elif kind == "multiline-id":
        pass  # the id is set by the caller
    elif kind == "extra-cell":
        row.error_fields = []
    elif kind == "missing-cells":
        row.error_fields = []


def expected_ok_figures(row: Row) -> dict:
    """The figures the reference expects of a row that is not an error."""
    r = row.ref
    c = row.cells
    out = {"computed_payment": cents_text(r["P"]), "finance_charge": cents_text(r["FC"])}
    status = "ok"
    if c.get("quoted_payment"):
        q = int(Decimal(c["quoted_payment"].replace(",", "")) * 100)
        out["payment_difference"] = cents_text(q - r["P"])
        out["payment_matches"] = "true" if q == r["P"] else "false"
        if q != r["P"]:
            status = "differs"
    else:
        out["payment_difference"] = ""
        out["payment_matches"] = ""
    if c.get("quoted_apr_percent"):
        with localcontext() as ctx:
            ctx.prec = 60
            d = Decimal(c["quoted_apr_percent"]) - r["apr"]
        out["apr_difference_points"] = d
        within = abs(d) <= Decimal("0.125")  # 12 CFR 1026.22(a)(2), a regular transaction
        out["apr_within_tolerance"] = "true" if within else "false"
        if not within:
            status = "differs"
    else:
        out["apr_difference_points"] = ""
        out["apr_within_tolerance"] = ""
    if c.get("quoted_finance_charge"):
        q = int(Decimal(c["quoted_finance_charge"].replace(",", "")) * 100)
        tol, rule = fc_tolerance(row)
        diff = q - r["FC"]
        # 12 CFR 1026.18(d)(1): a mortgage may understate by the tolerance, or overstate;
        # (d)(2): other credit within the tolerance above or below.
        within = diff >= -tol if rule == "mortgage" else abs(diff) <= tol
        out["finance_charge_difference"] = cents_text(diff)
        out["finance_charge_tolerance"] = cents_text(tol)
        out["finance_charge_within_tolerance"] = "true" if within else "false"
        if not within:
            status = "differs"
    else:
        out["finance_charge_difference"] = ""
        out["finance_charge_tolerance"] = ""
        out["finance_charge_within_tolerance"] = ""
    out["status"] = status
    return out


def generate(rng: random.Random) -> tuple[str, list[Row]]:
    planted_slots = []
    for kind, count, status in PLANTED:
        planted_slots += [(kind, status)] * count
    positions = rng.sample(range(ROWS), len(planted_slots))
    by_position = dict(zip(positions, planted_slots))
    rows = []
    for k in range(ROWS):
        rid = f"Q{k + 1:05d}"
        if k in by_position:
            kind, status = by_position[k]
            row = Row(rid, kind)
            plant(rng, row, kind)
            row.status = status
            if kind == "multiline-id":
                row.id = f"Quarry Lane {k + 1}, unit {k % 7 + 1}\nsecond line"
        else:
            row = Row(rid, "clean")
            make_loan(rng, row)
        row.cells["id"] = row.id
        if row.kind in ("extra-cell", "missing-cells") or row.kind.startswith("thousands-bad") or row.kind == "thousands-decimal-comma":
            row.query = None
        else:
            row.query_from_cells()
        if row.status != "error":
            exp = expected_ok_figures(row)
            if exp["status"] != row.status:
                raise AssertionError(f"generator: {row.kind} row {rid} expects {exp['status']}, planted {row.status}")
        rows.append(row)
    return write_csv(rows, INPUT_COLUMNS, ",", "\r\n"), rows


def csv_field(text: str, sep: str, force: bool) -> str:
    if force or any(ch in text for ch in (sep, '"', "\r", "\n")) or text != text.strip(" "):
        return '"' + text.replace('"', '""') + '"'
    return text


def write_csv(rows: list[Row], columns: list[str], sep: str, eol: str, bom: bool = False) -> str:
    """RFC 4180 text; records each row's starting line (the header is line 1)."""
    parts = [sep.join(columns) + eol]
    line = 2
    for row in rows:
        row.line = line
        if row.raw_line is not None:
            fields = row.raw_line
        else:
            fields = [csv_field(row.cells.get(c, ""), sep, c in row.quoted) for c in columns]
            if row.kind == "extra-cell":
                fields = fields + ["surplus"]
            elif row.kind == "missing-cells":
                fields = fields[:4]
        text = sep.join(fields) + eol
        parts.append(text)
        line += text.count("\n")
    return ("\ufeff" if bom else "") + "".join(parts)


# --------------------------------------------------------------------------
# Reading answers
# --------------------------------------------------------------------------


def csv_safe(text: str) -> str:
    """How a text cell must appear in the CSV answer (formula safety, the contract)."""
    if text.startswith(FORMULA_START) and not NUMBER.match(text):
        return "'" + text
    return text


def read_csv_answer(rep: Report, where: str, ans: Answer) -> list[dict] | None:
    if not rep.check(f"{where}: CSV answer 200 text/csv", ans.status == 200 and ans.ctype.startswith("text/csv"),
                     f"HTTP {ans.status} {ans.ctype}: {ans.body[:300]!r}"):
        return None
    text = ans.body.decode("utf-8")
    if text.startswith("\ufeff"):
        text = text[1:]
        print(f"note  {where}: the CSV answer starts with a byte-order mark")
    rep.check(f"{where}: answer records end with CRLF (RFC 4180, as the other CSV answers)",
              text.endswith("\r\n") or text == "",
              f"ends with {text[-20:]!r}")
    first = text.split("\r\n", 1)[0].split("\n", 1)[0]
    sep = ";" if first.startswith("id;") else ","
    try:
        table = list(csv.reader(io.StringIO(text, newline=""), delimiter=sep, strict=True))
    except csv.Error as e:
        rep.check(f"{where}: CSV answer parses (RFC 4180)", False, str(e))
        return None
    if not rep.check(f"{where}: CSV answer header", bool(table) and table[0] == ANSWER_COLUMNS,
                     f"header {table[0] if table else None}"):
        return None
    out = []
    for n, rec in enumerate(table[1:], start=2):
        if not rep.check(f"{where}: answer record has {len(ANSWER_COLUMNS)} cells", len(rec) == len(ANSWER_COLUMNS),
                         f"record {n}: {len(rec)} cells: {rec[:4]}"):
            continue
        for cell in rec:
            if cell.startswith(FORMULA_START) and not NUMBER.match(cell):
                rep.check(f"{where}: formula safety", False, f"record {n}: cell {cell[:40]!r} starts a formula")
        out.append(dict(zip(ANSWER_COLUMNS, rec)))
    return out


def read_ndjson_answer(rep: Report, where: str, ans: Answer) -> list[dict] | None:
    if not rep.check(f"{where}: NDJSON answer 200 application/x-ndjson",
                     ans.status == 200 and ans.ctype.startswith("application/x-ndjson"),
                     f"HTTP {ans.status} {ans.ctype}: {ans.body[:300]!r}"):
        return None
    out = []
    for n, line in enumerate(ans.body.decode("utf-8").split("\n"), start=1):
        if line == "":
            continue
        try:
            obj = json.loads(line)
        except ValueError as e:
            rep.check(f"{where}: NDJSON line parses", False, f"line {n}: {e}: {line[:120]!r}")
            continue
        rep.check(f"{where}: NDJSON keys", isinstance(obj, dict) and set(obj) == set(ANSWER_COLUMNS) | {"caution"},
                  f"line {n}: keys {sorted(obj) if isinstance(obj, dict) else type(obj).__name__}")
        out.append(obj)
    return out


def cell_of_json(key: str, value) -> str:
    """The CSV cell that carries an NDJSON (or single-check JSON) value."""
    if value is None:
        return ""
    if value is True:
        return "true"
    if value is False:
        return "false"
    if key in ("id", "reason", "status", "check_url"):
        return csv_safe(str(value))
    return str(value)


def check_ndjson_types(rep: Report, where: str, obj: dict):
    bad = []
    for k in FIGURES:
        if obj.get(k) is not None and not isinstance(obj.get(k), str):
            bad.append(f"{k}={obj.get(k)!r} (a string)")
    for k in BOOLEANS:
        if obj.get(k) is not None and not isinstance(obj.get(k), bool):
            bad.append(f"{k}={obj.get(k)!r} (a boolean)")
    if obj.get("line") is not None and (not isinstance(obj["line"], int) or isinstance(obj["line"], bool)):
        bad.append(f"line={obj['line']!r} (a number)")
    rep.check(f"{where}: NDJSON value types", not bad, f"id {obj.get('id')!r}: " + "; ".join(bad))


def compare_csv_ndjson(rep: Report, where: str, csv_rows: list[dict], nd_rows: list[dict], caution: str | None):
    rep.check(f"{where}: CSV and NDJSON answers have as many rows", len(csv_rows) == len(nd_rows),
              f"{len(csv_rows)} CSV, {len(nd_rows)} NDJSON")
    for c, j in zip(csv_rows, nd_rows):
        check_ndjson_types(rep, where, j)
        diffs = [f"{k}: CSV {c[k]!r}, NDJSON {j.get(k)!r}" for k in ANSWER_COLUMNS if c[k] != cell_of_json(k, j.get(k))]
        rep.check(f"{where}: NDJSON row equals CSV row", not diffs, f"id {j.get('id')!r}: " + "; ".join(diffs[:4]))
        rep.check(f"{where}: NDJSON caution equals the residue-caution header",
                  bool(j.get("caution")) and j.get("caution") == caution,
                  f"caution {j.get('caution')!r}, header {caution!r}")


def check_row_frame(rep: Report, where: str, rows: list[Row], got: list[dict], ndjson: bool):
    """Ids in order (none lost or repeated), lines, no early-stop row."""
    ids_in = [r.id for r in rows]
    ids_out = [g["id"] for g in got]
    want = ids_in if ndjson else [csv_safe(i) for i in ids_in]
    if got and (got[-1]["id"] in ("", None)) and got[-1]["status"] == "error":
        rep.check(f"{where}: the work was not stopped early", False, f"last row's reason: {got[-1]['reason']!r}")
    rep.check(f"{where}: as many answer rows as input rows", len(got) == len(rows), f"{len(got)} answer rows, {len(rows)} input rows")
    rep.check(f"{where}: ids out == ids in, in order", ids_out == want,
              first_difference(want, ids_out))
    rep.check(f"{where}: no id lost or repeated", Counter(ids_out) == Counter(want),
              f"lost {list((Counter(want) - Counter(ids_out)).elements())[:5]}, "
              f"extra {list((Counter(ids_out) - Counter(want)).elements())[:5]}")
    for r, g in zip(rows, got):
        line = g["line"] if ndjson else (int(g["line"]) if g["line"].isdigit() else g["line"])
        rep.check(f"{where}: line number", line == r.line, f"id {r.id!r}: line {g['line']!r}, the row starts on line {r.line}")


def first_difference(a: list, b: list) -> str:
    for k, (x, y) in enumerate(zip(a, b)):
        if x != y:
            return f"first difference at row {k + 1}: sent {x!r}, answered {y!r}"
    return f"lengths {len(a)} and {len(b)}"


# --------------------------------------------------------------------------
# Checks of rows against the reference and the single check
# --------------------------------------------------------------------------


def check_against_reference(rep: Report, where: str, row: Row, g: dict):
    rep.check(f"{where}: status of {row.kind} rows", g["status"] == row.status,
              f"id {row.id!r} ({row.kind}, line {row.line}): status {g['status']!r}, expected {row.status!r}; reason {g['reason']!r}")
    if row.status == "error":
        empty = [k for k in FIGURES + BOOLEANS if g[k] != ""]
        rep.check(f"{where}: an error row's figure cells are empty", not empty, f"id {row.id!r}: {empty}")
        rep.check(f"{where}: an error row has a reason", g["reason"] != "", f"id {row.id!r} ({row.kind})")
        named = [f for f in row.error_fields if not re.search(rf"(^|; ){re.escape(f)}: ", g["reason"])]
        rep.check(f"{where}: the reason names each bad field as `field: message`", not named,
                  f"id {row.id!r} ({row.kind}): reason {g['reason']!r} does not name {named}")
        return
    if g["status"] == "error":
        return  # the status failure above says it
    exp = expected_ok_figures(row)
    c = row.cells
    bad = []
    # Reference: the exact-fraction ledger (level_loan: exact annuity payment, interest half up
    # each month, final payment) and 12 CFR 1026.18(d) for the finance-charge tolerance;
    # differences are quoted − computed in integer cents.
    for k in ("computed_payment", "finance_charge", "payment_difference", "payment_matches",
              "apr_within_tolerance", "finance_charge_difference", "finance_charge_tolerance",
              "finance_charge_within_tolerance"):
        want = exp[k]
        if k == "finance_charge_tolerance" and want:
            if g[k] == "" or Decimal(g[k]) != Decimal(want):
                bad.append(f"{k} {g[k]!r} != {want!r}")
        elif g[k] != want:
            bad.append(f"{k} {g[k]!r} != {want!r}")
    # apr_percent: the reference APR rounded half up to two decimals (as crosscheck.py's check_apr).
    apr2 = round2_half_up(row.ref["apr"])
    try:
        if Decimal(g["apr_percent"]) != apr2:
            bad.append(f"apr_percent {g['apr_percent']!r} != {apr2}")
    except ArithmeticError:
        bad.append(f"apr_percent {g['apr_percent']!r} is not a number")
    if exp["apr_difference_points"] == "":
        if g["apr_difference_points"] != "":
            bad.append(f"apr_difference_points {g['apr_difference_points']!r} without a quote")
    else:
        try:
            err = abs(Decimal(g["apr_difference_points"]) - exp["apr_difference_points"])
            # The service's APR has 28 digits; the reference's 50: agree to 1e-18 points.
            if err > Decimal("1e-18"):
                bad.append(f"apr_difference_points {g['apr_difference_points']} vs reference {exp['apr_difference_points']:.30f}")
        except ArithmeticError:
            bad.append(f"apr_difference_points {g['apr_difference_points']!r} is not a number")
        if g["apr_tolerance_points"] == "" or Decimal(g["apr_tolerance_points"]) != Decimal("0.125"):
            bad.append(f"apr_tolerance_points {g['apr_tolerance_points']!r} != 0.125 (12 CFR 1026.22(a)(2))")
    # Reference: the quote as sent (thousands separators removed), compared as a decimal.
    for k in ("quoted_payment", "quoted_apr_percent", "quoted_finance_charge"):
        sent = c.get(k, "")
        if sent == "":
            if g[k] != "":
                bad.append(f"{k} {g[k]!r}, nothing quoted")
        elif g[k] == "" or Decimal(g[k]) != Decimal(sent.replace(",", "")):
            bad.append(f"{k} {g[k]!r}, quoted {sent!r}")
    for k in FIGURES:
        if g[k] != "" and not NUMBER.match(g[k]):
            bad.append(f"{k} {g[k]!r} is not a plain decimal")
    rep.check(f"{where}: figures equal the exact-fraction reference", not bad,
              f"id {row.id!r} ({row.kind}): " + "; ".join(bad))


def expected_from_single(j: dict) -> dict:
    """The answer row's cells as the single check's JSON answer gives them."""
    ft = j.get("finance_charge_tolerance")
    src = {
        "computed_payment": j.get("computed_payment"), "quoted_payment": j.get("quoted_payment"),
        "payment_difference": j.get("payment_difference"), "payment_matches": j.get("payment_matches"),
        "apr_percent": j.get("apr_percent"), "quoted_apr_percent": j.get("quoted_apr_percent"),
        "apr_difference_points": j.get("apr_difference_points"),
        "apr_tolerance_points": j.get("apr_tolerance_points"),
        "apr_within_tolerance": j.get("apr_within_tolerance"), "finance_charge": j.get("finance_charge"),
        "quoted_finance_charge": ft.get("quoted_finance_charge") if ft else None,
        "finance_charge_difference": ft.get("difference") if ft else None,
        "finance_charge_tolerance": ft.get("tolerance") if ft else None,
        "finance_charge_within_tolerance": ft.get("within_tolerance") if ft else None,
    }
    out = {k: cell_of_json(k, v) for k, v in src.items()}
    verdicts = [src["payment_matches"], src["apr_within_tolerance"], src["finance_charge_within_tolerance"]]
    out["status"] = "differs" if False in verdicts else "ok"
    return out


def problem_reason(raw: bytes) -> str | None:
    try:
        p = json.loads(raw)
        return "; ".join(f"{e['pointer']}: {e['message']}" for e in p["errors"])
    except (ValueError, KeyError, TypeError):
        return None


def check_against_single(rep: Report, base: str, where: str, rid: str, query: dict, g: dict, open_page: bool):
    one = single_check(base, query)
    if one.status == 200:
        j = json.loads(one.body)
        exp = expected_from_single(j)
        diffs = [f"{k}: row {g[k]!r}, single check {v!r}" for k, v in exp.items() if g[k] != v]
        rep.check(f"{where}: row equals the single check field by field", not diffs,
                  f"id {rid!r}: " + "; ".join(diffs[:5]))
    elif one.status == 422:
        j = None
        reason = problem_reason(one.body)
        rep.check(f"{where}: an error row's reason equals the single check's errors",
                  g["status"] == "error" and g["reason"] == reason,
                  f"id {rid!r}: row {g['status']!r} {g['reason']!r}, single check 422 {reason!r}")
    else:
        rep.check(f"{where}: single check answers", False, f"id {rid!r}: HTTP {one.status}: {one.body[:200]!r}")
        return
    # check_url: the single-check page for the row, relative, whose query asks the same check.
    url = g["check_url"]
    if not rep.check(f"{where}: check_url is a relative /check?… URL", url.startswith("/check?"),
                     f"id {rid!r}: {url!r}"):
        return
    via = http(base, "GET", "/api/v1/loans/check?" + url[len("/check?"):], timeout=60)
    same = via.status == one.status and (json.loads(via.body) == j if j is not None else problem_reason(via.body) == problem_reason(one.body))
    rep.check(f"{where}: check_url's query asks the same single check", same,
              f"id {rid!r}: {url!r} -> HTTP {via.status}, direct HTTP {one.status}")
    if open_page:
        page = http(base, "GET", url, timeout=60)
        rep.check(f"{where}: check_url opens the check page", page.status == 200 and page.ctype.startswith("text/html"),
                  f"id {rid!r}: GET {url} -> HTTP {page.status} {page.ctype}")


# --------------------------------------------------------------------------
# The 20,000-row file
# --------------------------------------------------------------------------


def main_file(rep: Report, base: str):
    t0 = time.time()
    rng = random.Random(SEED)
    text, rows = generate(rng)
    # Certify the reference APR exactly where the quotes sit near the tolerance, and on the sample.
    sample = {k for k in range(len(rows)) if k % 50 == 0} | {k for k, r in enumerate(rows) if r.kind != "clean"}
    mark = rep.mark()
    for k in sorted(sample):
        r = rows[k]
        if r.ref is not None and (r.ref.get("certify") or k % 50 == 0):
            rep.check("reference: APR certified by the exact-fraction Appendix J equation",
                      certify_apr(r.ref["apr"], r.ref["A"], r.ref["P"], r.ref["F"], r.ref["n"]),
                      f"id {r.id!r}: {r.ref['apr']}")
    kinds = Counter(r.kind for r in rows)
    print(f"      generated {len(rows)} rows ({len(text.encode()) / 1e6:.1f} MB; "
          f"{sum(v for k, v in kinds.items() if k != 'clean')} planted) in {time.time() - t0:.1f} s", flush=True)
    rep.section("reference", mark)

    mark = rep.mark()
    t1 = time.time()
    ans = post_csv(base, text)
    print(f"      CSV answer: HTTP {ans.status}, {len(ans.body) / 1e6:.1f} MB in {time.time() - t1:.1f} s", flush=True)
    got = read_csv_answer(rep, "main CSV", ans)
    caution = ans.header("residue-caution")
    if got is not None:
        rep.check("main CSV: residue-rows", ans.header("residue-rows") == str(ROWS), f"residue-rows: {ans.header('residue-rows')!r}")
        rep.check("main CSV: residue-caution header", bool(caution), f"{caution!r}")
        check_row_frame(rep, "main CSV", rows, got, ndjson=False)
        for r, g in zip(rows, got):
            check_against_reference(rep, "main CSV", r, g)
            if r.kind not in ("extra-cell", "missing-cells"):
                rep.check("main CSV: check_url present", g["check_url"].startswith("/check?"), f"id {r.id!r}: {g['check_url']!r}")
        statuses = Counter(g["status"] for g in got)
        print(f"      statuses: {dict(statuses)}", flush=True)
    rep.section("20,000 rows, CSV answer, against the exact-fraction reference", mark)

    mark = rep.mark()
    t1 = time.time()
    nd = post_csv(base, text, accept="application/x-ndjson")
    print(f"      NDJSON answer: HTTP {nd.status}, {len(nd.body) / 1e6:.1f} MB in {time.time() - t1:.1f} s", flush=True)
    nd_rows = read_ndjson_answer(rep, "main NDJSON", nd)
    if nd_rows is not None:
        rep.check("main NDJSON: residue-rows", nd.header("residue-rows") == str(ROWS), f"residue-rows: {nd.header('residue-rows')!r}")
        check_row_frame(rep, "main NDJSON", rows, nd_rows, ndjson=True)
        if got is not None:
            compare_csv_ndjson(rep, "main", got, nd_rows, caution or nd.header("residue-caution"))
    rep.section("20,000 rows, NDJSON answer, against the CSV answer", mark)

    mark = rep.mark()
    if got is not None and len(got) == len(rows):
        t1 = time.time()
        n = 0
        for k in sorted(sample):
            r = rows[k]
            if r.query is None:
                continue
            check_against_single(rep, base, "sample", r.id, r.query, got[k], open_page=(k % 400 == 0))
            n += 1
        print(f"      {n} sampled rows against GET /api/v1/loans/check in {time.time() - t1:.1f} s", flush=True)
    else:
        rep.check("sample: the CSV answer has every row", False, "skipped: the CSV answer is missing rows")
    rep.section("sample against the single check", mark)


# --------------------------------------------------------------------------
# Edge files
# --------------------------------------------------------------------------


def loan_row(rid: str, principal_c: int, rate_k: int, n: int, fee_c: int = 0, **extra) -> Row:
    """A correct row for an edge file, with its reference."""
    row = Row(rid, "edge")
    rate = Fraction(rate_k, 1000)
    P, F = level_loan(principal_c, rate, n)
    A = principal_c - fee_c
    row.ref = {"principal_c": principal_c, "rate": rate, "n": n, "P": P, "F": F, "fee_c": fee_c, "A": A,
               "FC": P * (n - 1) + F - principal_c + fee_c, "apr": apr_root(A, P, F, n)}
    row.cells = {"id": rid, "principal": cents_text(principal_c), "annual_rate_percent": rate_text(rate_k),
                 "term_months": str(n), "quoted_payment": cents_text(P),
                 "quoted_apr_percent": str(round2_half_up(row.ref["apr"]))}
    if fee_c:
        row.cells["prepaid_finance_charges.origination"] = cents_text(fee_c)
    row.cells.update(extra)
    return row


def edge_post_and_check(rep: Report, base: str, where: str, text: str, rows: list[Row]):
    """Posts an edge file, checks the frame, the statuses and the sample against the single check.
    Rows of kind "blank" (all cells empty) are in the file but expect no answer row."""
    rows = [r for r in rows if r.kind != "blank"]
    ans = post_csv(base, text)
    got = read_csv_answer(rep, where, ans)
    if got is None:
        return None
    rep.check(f"{where}: residue-rows", ans.header("residue-rows") == str(len(rows)), f"residue-rows: {ans.header('residue-rows')!r}")
    check_row_frame(rep, where, rows, got, ndjson=False)
    for r, g in zip(rows, got):
        rep.check(f"{where}: status", g["status"] == r.status,
                  f"id {r.id!r}: {g['status']!r} (reason {g['reason']!r}), expected {r.status!r}")
        if r.status == "error":
            named = [f for f in r.error_fields if not re.search(rf"(^|; ){re.escape(f)}: ", g["reason"])]
            rep.check(f"{where}: the reason names the bad field", not named, f"id {r.id!r}: reason {g['reason']!r}, expected {named}")
        elif r.ref is not None and g["status"] != "error":
            check_against_reference(rep, where, r, g)
        if r.query is not None and len(got) == len(rows):
            check_against_single(rep, base, where, r.id, r.query, g, open_page=False)
    nd = post_csv(base, text, accept="application/x-ndjson")
    nd_rows = read_ndjson_answer(rep, where + " NDJSON", nd)
    if nd_rows is not None:
        check_row_frame(rep, where + " NDJSON", rows, nd_rows, ndjson=True)
        compare_csv_ndjson(rep, where, got, nd_rows, ans.header("residue-caution"))
    return got


def edge_semicolon_bom(rep: Report, base: str):
    """Semicolon-separated with a UTF-8 byte-order mark and CRLF, as a spreadsheet saves it."""
    cols = ["id", "principal", "annual_rate_percent", "term_months", "quoted_payment", "quoted_apr_percent",
            "prepaid_finance_charges.origination"]
    rows = []
    r = loan_row("S1", 25_000_000, 6_875, 360, 437_550)
    rows.append(r)
    r = loan_row("S2; with a semicolon", 150_000, 7_250, 24)
    r.cells["principal"] = "1,500.00"  # quoted, grouped, with a decimal point: accepted
    r.quoted.add("principal")
    rows.append(r)
    r = loan_row("S3", 25_000_000, 7_000, 360)
    r.cells["quoted_payment"] = with_thousands(r.cells["quoted_payment"])  # "1,663.26": accepted
    r.quoted.add("quoted_payment")
    rows.append(r)
    r = Row("", "blank")  # a spreadsheet's empty row, ";;;;;;": no row at all
    r.raw_line = [""] * len(cols)
    rows.append(r)
    r = loan_row("S4", 1_000_000, 5_000, 36)
    r.cells["annual_rate_percent"] = "1,5"  # a decimal comma in a semicolon file: a row error
    r.quoted.add("annual_rate_percent")
    r.status, r.error_fields = "error", ["annual_rate_percent"]
    rows.append(r)
    r = loan_row("S5", 150_000, 5_000, 36)
    r.cells["principal"] = "1,500"  # grouped but no decimal point, in a semicolon file: a row error
    r.quoted.add("principal")
    r.status, r.error_fields = "error", ["principal"]
    rows.append(r)
    r = loan_row("S6", 150_000, 5_000, 36)
    r.cells["principal"] = "1,500.00"  # not quoted: a row error
    r.status, r.error_fields = "error", ["principal"]
    rows.append(r)
    r = Row("", "blank")  # a blank line: no row either
    r.raw_line = [""]
    rows.append(r)
    r = loan_row("Vindrøse café – ünït", 2_000_000, 4_500, 60)  # UTF-8 text survives
    rows.append(r)
    for r in rows:
        if r.status != "error" and r.kind != "blank":
            r.query_from_cells()
    text = write_csv(rows, cols, ";", "\r\n", bom=True)
    edge_post_and_check(rep, base, "semicolon+BOM", text, rows)
    # The same file, the S6 row written unquoted on purpose: confirm the writer did not quote it.
    rep.check("semicolon+BOM: the unquoted 1,500.00 cell is sent unquoted", "\r\nS6;1,500.00;" in text,
              "the writer quoted the S6 cell")


def edge_quoted_fields(rep: Report, base: str):
    """Quoted cells with commas, doubled quotes and line breaks; thousands separators; LF line ends."""
    cols = ["id", "principal", "annual_rate_percent", "term_months", "quoted_payment", "quoted_apr_percent",
            "prepaid_finance_charges", "mortgage"]
    rows = []
    r = loan_row("Larkspur, unit 4\nsecond line", 25_000_000, 6_500, 360)
    r.cells["principal"] = "250,000.00"
    r.quoted.add("principal")
    rows.append(r)
    r = loan_row('Quote "A", third', 1_850_000, 8_490, 72, 39_500, mortgage="false")
    r.cells["prepaid_finance_charges"] = "origination:395.00"
    r.cells.pop("prepaid_finance_charges.origination")
    rows.append(r)
    r = loan_row("Birchwood\r\nline two\r\nline three", 32_500_000, 7_125, 180, 900_000)
    r.cells["prepaid_finance_charges"] = "origination:6500.00,points:2500"  # the list form, quoted
    r.cells.pop("prepaid_finance_charges.origination")
    rows.append(r)
    r = loan_row("whole thousands", 25_000_000, 6_000, 240)
    r.cells["principal"] = "250,000"  # grouped, no decimal point, in a comma file: accepted
    r.quoted.add("principal")
    rows.append(r)
    for rid, cell in [("grouped by two", "25,00,000.00"), ("decimal comma", "1,5"), ("leading zero group", "0,250.00"),
                      ("short group", "250,00.00")]:
        r = loan_row(rid, 25_000_000, 6_000, 240)
        r.cells["principal"] = cell
        r.quoted.add("principal")
        r.status, r.error_fields = "error", ["principal"]
        rows.append(r)
    r = loan_row("after the breaks", 1_200_000, 3_999, 48)
    rows.append(r)
    for r in rows:
        if r.status != "error":
            r.query_from_cells()
    text = write_csv(rows, cols, ",", "\n")
    edge_post_and_check(rep, base, "quoted fields", text, rows)


def edge_formula_ids(rep: Report, base: str):
    """Ids that a spreadsheet would take for formulas come back prefixed with "'"; numbers do not."""
    cols = ["id", "principal", "annual_rate_percent", "term_months", "quoted_payment"]
    ids = ["=1+1", "@SUM(A1:A2)", "-x", "+x", "\tx", "=HYPERLINK(\"#\")", "-42", "-3.5", "42", "plain",
           "\rcarriage", " padded id ", "\tquoted tab"]
    rows = []
    for k, rid in enumerate(ids):
        r = loan_row(rid, 1_000_000 + 10_000 * k, 5_000 + 250 * k, 36)
        r.cells.pop("quoted_apr_percent")
        if rid == "\tquoted tab":
            r.quoted.add("id")  # the same tab in quotes (the "\tx" above is not quoted)
        r.query_from_cells()
        rows.append(r)
    text = write_csv(rows, cols, ",", "\r\n")
    got = edge_post_and_check(rep, base, "formula ids", text, rows)
    explicit = post_csv(base, text, accept="text/csv")
    rep.check("formula ids: Accept: text/csv gives the default CSV answer",
              explicit.status == 200 and explicit.ctype.startswith("text/csv"),
              f"HTTP {explicit.status} {explicit.ctype}")
    if got is not None:
        want = ["'=1+1", "'@SUM(A1:A2)", "'-x", "'+x", "'\tx", "'=HYPERLINK(\"#\")", "-42", "-3.5", "42", "plain",
                "'\rcarriage", " padded id ", "'\tquoted tab"]
        rep.check("formula ids: CSV ids", [g["id"] for g in got] == want, f"{[g['id'] for g in got]}")


def edge_header_only(rep: Report, base: str):
    for name, text in [("header-only (CRLF)", "id,principal,annual_rate_percent,term_months\r\n"),
                       ("header-only (no line end)", "id,principal,annual_rate_percent,term_months")]:
        ans = post_csv(base, text)
        got = read_csv_answer(rep, name, ans)
        if got is not None:
            rep.check(f"{name}: the answer has only its header row", got == [] and ans.body.decode("utf-8").lstrip("\ufeff").count("\n") == 1,
                      f"{ans.body[:300]!r}")
            rep.check(f"{name}: residue-rows 0", ans.header("residue-rows") == "0", f"{ans.header('residue-rows')!r}")
        nd = post_csv(base, text, accept="application/x-ndjson")
        rep.check(f"{name}: NDJSON answer 200 with no lines",
                  nd.status == 200 and nd.ctype.startswith("application/x-ndjson") and nd.body.strip() == b"",
                  f"HTTP {nd.status} {nd.ctype}: {nd.body[:200]!r}")


def problem(rep: Report, where: str, ans: Answer, status: int) -> dict | None:
    ok = ans.status == status and ans.ctype.startswith("application/problem+json")
    if not rep.check(f"{where}: HTTP {status} application/problem+json", ok,
                     f"HTTP {ans.status} {ans.ctype}: {ans.body[:300]!r}"):
        return None
    try:
        return json.loads(ans.body)
    except ValueError:
        rep.check(f"{where}: problem details parse", False, f"{ans.body[:200]!r}")
        return None


def edge_refusals(rep: Report, base: str):
    for accept in (None, "application/x-ndjson"):
        tag = f" (Accept {accept})" if accept else ""
        problem(rep, "empty file" + tag, post_csv(base, "", accept), 422)
    cases = [
        ("unknown column", "id,principal,annual_rate,term_months\r\n1,1000,5,12\r\n", "annual_rate"),
        ("duplicate column", "id,principal,principal,annual_rate_percent,term_months\r\n1,1000,1000,5,12\r\n", "principal"),
        ("missing id column", "principal,annual_rate_percent,term_months\r\n1000,5,12\r\n", "id"),
        ("unknown column, semicolon file", "\ufeffid;principal;annual_rate_percent;term_months;colour\r\n1;1000;5;12;red\r\n", "colour"),
    ]
    for where, text, column in cases:
        p = problem(rep, where, post_csv(base, text), 422)
        if p is None:
            continue
        pointers = [e.get("pointer") for e in p.get("errors", []) if isinstance(e, dict)]
        rep.check(f"{where}: errors[].pointer names the column", column in pointers, f"pointers {pointers}")
        detail = p.get("detail", "")
        missing = [c for c in KNOWN_COLUMNS_SAMPLE if c not in detail]
        rep.check(f"{where}: detail lists the known columns", not missing, f"detail {detail[:300]!r} lacks {missing}")


def edge_row_limit(rep: Report, base: str):
    text = "id\r\n" + "".join(f"r{k}\r\n" for k in range(MAX_ROWS + 1))
    p = problem(rep, f"{MAX_ROWS + 1} data rows", post_csv(base, text), 413)
    if p is not None:
        detail = p.get("detail", "")
        rep.check(f"{MAX_ROWS + 1} data rows: detail names the limit of 100,000 rows",
                  any(s in detail for s in ("100000", "100,000", "100 000")), f"detail {detail!r}")


def edge_row_boundary(rep: Report, base: str):
    """Exactly 100,000 data rows (ids only, each a row error: no loan) are all answered."""
    text = "id\r\n" + "".join(f"b{k}\r\n" for k in range(MAX_ROWS))
    ans = post_csv(base, text)
    got = read_csv_answer(rep, f"{MAX_ROWS} data rows", ans)
    if got is not None:
        rep.check(f"{MAX_ROWS} data rows: residue-rows", ans.header("residue-rows") == str(MAX_ROWS), f"{ans.header('residue-rows')!r}")
        ids = [g["id"] for g in got]
        rep.check(f"{MAX_ROWS} data rows: every row answered, in order", ids == [f"b{k}" for k in range(MAX_ROWS)],
                  f"{len(ids)} rows; {first_difference([f'b{k}' for k in range(MAX_ROWS)], ids)}")
        rep.check(f"{MAX_ROWS} data rows: each is an error row (no loan given)",
                  all(g["status"] == "error" and g["reason"] for g in got),
                  f"statuses {Counter(g['status'] for g in got)}")


def edge_byte_limit(rep: Report, base: str):
    """A 40 MiB file (fewer than 100,000 rows) is refused with 413, the limit named."""
    pad = "x" * 1000
    size = 40 * 1024 * 1024
    rows = size // (len(pad) + 10) + 1
    text = "id\r\n" + "".join(f"p{k:07d}{pad}\r\n" for k in range(rows))
    try:
        ans = post_csv(base, text)
    except OSError as e:  # the server may close the connection once it has refused
        rep.check(f"{len(text) >> 20} MiB file: HTTP 413 before the connection closes", False, f"{type(e).__name__}: {e}")
        return
    p = problem(rep, f"{len(text) >> 20} MiB file ({rows} rows)", ans, 413)
    if p is not None:
        detail = p.get("detail", "")
        rep.check("byte limit: the detail names the limit",
                  re.search(r"[0-9][0-9,]*\s*(bytes|MiB|MB|KiB)", detail) is not None, f"detail {detail!r}")


SECTIONS = [
    ("semicolon-separated file with a byte-order mark", edge_semicolon_bom),
    ("quoted cells: commas, quotes, line breaks, thousands separators", edge_quoted_fields),
    ("formula-like ids", edge_formula_ids),
    ("header-only file", edge_header_only),
    ("refused files: empty, unknown, duplicate and missing columns", edge_refusals),
    ("more rows than the limit", edge_row_limit),
    ("exactly the most rows", edge_row_boundary),
    ("a file over the byte limit", edge_byte_limit),
]


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("base_url", nargs="?", default=None)
    ap.add_argument("--base-url", dest="base_url_opt", default=None)
    ap.add_argument("--skip-main", action="store_true", help="only the edge files")
    args = ap.parse_args()
    base = (args.base_url or args.base_url_opt or "http://127.0.0.1:18531").rstrip("/")
    rep = Report()
    t0 = time.time()
    todo = [] if args.skip_main else [("20,000-row file", main_file)]
    for name, fn in todo + SECTIONS:
        mark = rep.mark()
        try:
            fn(rep, base)
        except Exception as e:  # noqa: BLE001 - a crash in one section is one failure
            rep.check(name, False, f"{type(e).__name__}: {e}")
        rep.section(name, mark)
    print(f"      {time.time() - t0:.0f} s in all")
    print(f"pipeline: {rep.passed} passed, {rep.failed} failed")
    return 1 if rep.failed else 0


if __name__ == "__main__":
    sys.exit(main())
