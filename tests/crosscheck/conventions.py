#!/usr/bin/env python3
"""Cross-check Residue's due dates, odd days and level payments against QuantLib and numpy-financial.

The loan schedule operation (GET /api/v1/loans/schedule) is asked deliberately
chosen questions and every answer is compared with one of two outside
references that share none of Residue's code:

* QuantLib 1.44 (the `QuantLib` package on PyPI, the C++ library's own Python
  bindings):
  - `ql.Schedule(first, last, ql.Period(frequency), ql.NullCalendar(),
    ql.Unadjusted, ql.Unadjusted, ql.DateGeneration.Forward, False)` dates the
    rows of monthly, quarterly, semiannual, annual, biweekly and weekly loans
    (no business-day calendar, no end-of-month rolling: a loan paying on the
    31st pays on the last day of shorter months, one paying on 28 February
    keeps the 28th). `last` is QuantLib's own `first + ql.Period((n − 1)·length,
    units)`;
  - the same with `ql.DateGeneration.Backward` ending at the first payment
    gives the regular due date one period before it, where the odd first
    period ends;
  - semimonthly loans pay on two fixed days a month, d and d + 15 when the
    first payment falls on day d ≤ 15, else d − 15 and d, each clamped to the
    month's end. QuantLib has no such rule, so the reference is composed from
    two QuantLib monthly schedules (Forward generation seeded on day d of a
    January, a 31-day month, so each later date is QuantLib's clamped
    `seed + k months`), merged in date order;
  - `ql.Actual365Fixed()`, `ql.Actual360()`, `ql.Thirty360(ql.Thirty360.BondBasis)`,
    `ql.Thirty360(ql.Thirty360.USA)` and `ql.Thirty360(ql.Thirty360.European)`
    count the odd days from funding to that due date (`dayCount(funding,
    previous)`). When funding falls after that due date the odd days are
    negative: the reference is then −dayCount(previous, funding), the count
    of the same span from its earlier end. (QuantLib's 30/360 dayCount is
    not antisymmetric: its month-end adjustments look at which argument
    comes first. Under the US rule dayCount(1 March, 28 February 2027) is −3
    while the span from 28 February to 1 March counts 1 day; under the bond
    basis dayCount(31 March, 27 March) is −3 while the span from 27 to 31
    March counts 4.) Every frequency is checked with every day count, and
    the three 30/360 variants (and the `thirty_360` alias) on a grid of
    month ends, 28/29 February, 30ths and 31sts, with a monthly loan whose
    previous due date is the second date (a weekly one where no monthly
    first payment falls a month after it, as after 31 March);
  The odd-days interest is principal × annual rate / 100 × odd days / basis
  (365 for actual/365, else 360), rounded half up to the cent, computed here in
  Python's decimal module from QuantLib's day count. Dates and day counts
  compare exactly; the odd-days interest to the cent, exactly.

* numpy-financial 1.0.0 (`import numpy_financial as npf`), called with
  decimal.Decimal arguments so that it computes in 50-digit decimals, at the
  periodic rate r = annual rate / 100 / payments a year (the service takes
  compounding equal to the payment frequency when none is given):
  - `level_payment(r, n, −principal)` rounded half up to the cent equals the
    service's level payment, exactly;
  - `balance_after(r, k, payment, −principal)` is the balance after k payments of the
    posted (rounded) payment with interest unrounded; the service rounds each
    period's interest half up to the cent (an error of at most ½ cent that
    then earns interest), so after row k they differ by at most
    ½ cent · Σ_{j<k} (1 + r)^j + 1 cent (½ cent · k + 1 cent at rate 0, where
    nothing is rounded). (½ cent · k + 1 cent is no bound once interest
    compounds: a 30-year loan at 24.99 % is 11 dollars off balance_after at row 359,
    within ½ cent · Σ (1 + r)^j = 400 dollars.) The final payment minus the
    level payment is compared with balance_after at the last row, to the same bound;
  - the count of payments is n, unless balance_after of the rounded payment after n − 1
    payments is already below zero by more than the bound: the rounded
    payment then repays the loan sooner, and the count is as for a loan
    given by its payment, below;
  - `interest_part(r, 1, n, −principal)` and `principal_part(r, 1, n, −principal)` equal
    the first row's interest and principal within 1 cent (½ cent from the
    payment's rounding, ½ from the interest's);
  - for a loan given by its payment, the count of payments is
    ⌈`payments_needed(r, −payment, principal)`⌉ (payments_needed in float64: numpy-financial's
    payments_needed calls log, which Decimal lacks). A case is clear-cut only when balance_after
    after ⌈payments_needed⌉ − 1 payments exceeds the rounding bound and balance_after after ⌈payments_needed⌉
    falls below minus it; a case that is not fails as a badly chosen case
    (100000 at 6 % paying 650 a month, payments_needed 293.99997, leaves 0.04 after 294
    rounded rows: a 295th payment of 0.04 is right there). At rate 0 numpy-financial 1.0.0's payments_needed
    answers −principal/payment, with the wrong sign, so the reference there is
    ⌈principal / payment⌉.

Usage: python tests/crosscheck/conventions.py --base-url http://127.0.0.1:18531
Prints one line per check, naming the request URL and both values when they
differ, and ends with `conventions: N passed, M failed`; exits 1 if any check
failed.
"""

from __future__ import annotations

import argparse
import json
import math
import re
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from decimal import ROUND_HALF_UP, Decimal, DivisionByZero, InvalidOperation, getcontext, localcontext

import numpy as np
import numpy_financial as npf

# The reference library's functions under this project's own words. The
# attribute names on the right are the library's published interface; they are
# used on these five lines only and never reach a user of Residue.
level_payment = npf.pmt
balance_after = npf.fv
interest_part = npf.ipmt
principal_part = npf.ppmt
payments_needed = npf.nper
import QuantLib as ql

getcontext().prec = 50
CENT = Decimal("0.01")
HALF_CENT = Decimal("0.005")
PATH = "/api/v1/loans/schedule"

PER_YEAR = {"annual": 1, "semiannual": 2, "quarterly": 4, "monthly": 12,
            "semimonthly": 24, "biweekly": 26, "weekly": 52}
QL_FREQUENCY = {"annual": ql.Annual, "semiannual": ql.Semiannual, "quarterly": ql.Quarterly,
                "monthly": ql.Monthly, "biweekly": ql.Biweekly, "weekly": ql.Weekly}
# name in requests: (QuantLib day counter, basis, what the check names as its source)
DAY_COUNTS = {
    "actual_365": (ql.Actual365Fixed(), 365, "QuantLib Actual365Fixed().dayCount"),
    "actual_360": (ql.Actual360(), 360, "QuantLib Actual360().dayCount"),
    "thirty_360_bond_basis": (ql.Thirty360(ql.Thirty360.BondBasis), 360,
                              "QuantLib Thirty360(Thirty360.BondBasis).dayCount"),
    "thirty_360_us": (ql.Thirty360(ql.Thirty360.USA), 360, "QuantLib Thirty360(Thirty360.USA).dayCount"),
    "thirty_e_360": (ql.Thirty360(ql.Thirty360.European), 360,
                     "QuantLib Thirty360(Thirty360.European).dayCount"),
    # `thirty_360` is the service's alias of the bond basis.
    "thirty_360": (ql.Thirty360(ql.Thirty360.BondBasis), 360, "QuantLib Thirty360(Thirty360.BondBasis).dayCount"),
}
FIVE_DAY_COUNTS = ["actual_365", "actual_360", "thirty_360_bond_basis", "thirty_360_us", "thirty_e_360"]
STATED_PREVIOUS = re.compile(r"to (\d{4}-\d{2}-\d{2}), the due date one period before")


# --------------------------------------------------------------------------
# Reporting and HTTP
# --------------------------------------------------------------------------


class Report:
    def __init__(self):
        self.passed = 0
        self.failed = 0

    def check(self, name: str, ok: bool, detail: str, url: str = ""):
        if ok:
            self.passed += 1
            print(f"ok    {name}: {detail}", flush=True)
        else:
            self.failed += 1
            where = f"\n      GET {url}" if url else ""
            print(f"FAIL  {name}: {detail}{where}", flush=True)


class HttpProblem(Exception):
    pass


def schedule(base: str, query: dict) -> tuple[str, dict]:
    url = base + PATH + "?" + urllib.parse.urlencode(query)
    try:
        with urllib.request.urlopen(url, timeout=60) as r:
            raw, status = r.read(), r.status
    except urllib.error.HTTPError as e:
        raw, status = e.read(), e.code
    if status != 200:
        raise HttpProblem(f"HTTP {status}: {raw[:400].decode('utf-8', 'replace')}\n      GET {url}")
    return url, json.loads(raw)


def run_case(rep: Report, name: str, fn, *args):
    """A crash or an error answer in one case is one failure; the rest go on."""
    try:
        fn(rep, name, *args)
    except HttpProblem as e:
        rep.check(name, False, str(e))
    except Exception as e:  # noqa: BLE001 - a failure of any kind fails the case
        rep.check(name, False, f"{type(e).__name__}: {e}")


def half_up(x: Decimal) -> Decimal:
    return x.quantize(CENT, rounding=ROUND_HALF_UP)


def dec(fn, *args) -> Decimal:
    """numpy-financial's `fn` on Decimal arguments, as one finite Decimal.

    numpy-financial evaluates both branches of its np.where(rate == 0, …), so at
    rate 0 the other branch divides 0 by 0: with the decimal traps for that off
    it is a NaN that np.where then discards, as it discards float64's.
    """
    with localcontext() as ctx:
        ctx.traps[InvalidOperation] = False
        ctx.traps[DivisionByZero] = False
        x = fn(*args)
    if isinstance(x, np.ndarray):
        x = x.item()
    if not isinstance(x, Decimal) or not x.is_finite():
        raise TypeError(f"numpy-financial {fn.__name__} answered {x!r}, not a finite Decimal")
    return x


# --------------------------------------------------------------------------
# QuantLib references
# --------------------------------------------------------------------------


def qd(iso: str) -> ql.Date:
    return ql.DateParser.parseISO(iso)


def ql_schedule(start: ql.Date, end: ql.Date, tenor: ql.Period, rule) -> list:
    # reference: QuantLib Schedule, NullCalendar, Unadjusted, no end-of-month rolling
    s = ql.Schedule(start, end, tenor, ql.NullCalendar(), ql.Unadjusted, ql.Unadjusted, rule, False)
    return list(s)


def semimonthly_days(first: ql.Date) -> tuple[int, int]:
    d = first.dayOfMonth()
    return (d, d + 15) if d <= 15 else (d - 15, d)


def semimonthly_grid(first: ql.Date, years_after: int) -> list:
    """Both fixed days' monthly QuantLib schedules, merged: due dates from two
    years before `first` to `years_after` years after it."""
    dates = []
    for day in semimonthly_days(first):
        # Seeded on a January day, which exists for every day 1–31; each later date is
        # QuantLib's seed + k months, clamped to the month's end.
        seed = ql.Date(day, ql.January, first.year() - 2)
        end = ql.Date(day, ql.January, first.year() + years_after + 1)
        # reference: QuantLib Schedule Forward, monthly, from the seed
        dates += ql_schedule(seed, end, ql.Period(ql.Monthly), ql.DateGeneration.Forward)
    return sorted(set(dates))


def reference_dates(first: ql.Date, n: int, frequency: str) -> list:
    """The n due dates from `first`."""
    if frequency == "semimonthly":
        grid = semimonthly_grid(first, n // 24 + 1)
        return [d for d in grid if d >= first][:n]
    tenor = ql.Period(QL_FREQUENCY[frequency])
    last = first + ql.Period(tenor.length() * (n - 1), tenor.units())
    # reference: QuantLib Schedule, DateGeneration.Forward from the first payment
    return ql_schedule(first, last, tenor, ql.DateGeneration.Forward)


def reference_previous(first: ql.Date, frequency: str) -> ql.Date:
    """The regular due date one period before `first`."""
    if frequency == "semimonthly":
        return max(d for d in semimonthly_grid(first, 0) if d < first)
    tenor = ql.Period(QL_FREQUENCY[frequency])
    start = first + ql.Period(-3 * tenor.length(), tenor.units())
    # reference: QuantLib Schedule, DateGeneration.Backward ending at the first payment
    dates = ql_schedule(start, first, tenor, ql.DateGeneration.Backward)
    return dates[-2]


def reference_days(day_count: str, funding: ql.Date, previous: ql.Date) -> tuple[int, str]:
    """The odd days, and the QuantLib call that counted them."""
    counter, _, source = DAY_COUNTS[day_count]
    if funding <= previous:
        return counter.dayCount(funding, previous), f"{source}({funding.ISO()}, {previous.ISO()})"
    # Funded after the regular due date: the same span counted from its earlier end.
    return -counter.dayCount(previous, funding), f"−{source}({previous.ISO()}, {funding.ISO()})"


def odd_interest(principal: str, rate: str, days: int, basis: int) -> Decimal:
    # reference: the documented formula in Python Decimal, rounded half up to the cent
    return half_up(Decimal(principal) * Decimal(rate) / 100 * days / basis)


# --------------------------------------------------------------------------
# 1. Due dates against QuantLib schedules
# --------------------------------------------------------------------------

DATE_CASES = []
for _frequency, _n, _firsts in [
    ("monthly", 25, ["2027-01-31", "2027-03-31", "2027-01-30", "2027-05-30", "2027-01-29", "2028-01-29",
                     "2028-01-31", "2028-02-29", "2027-02-28", "2028-02-28", "2027-08-31", "2027-12-31",
                     "2027-10-15"]),
    ("quarterly", 12, ["2027-01-31", "2027-11-30", "2027-02-28", "2028-02-29", "2027-08-31", "2027-05-29"]),
    ("semiannual", 8, ["2027-08-31", "2028-02-29", "2027-02-28", "2027-03-31", "2027-12-30"]),
    ("annual", 6, ["2028-02-29", "2027-02-28", "2027-12-31", "2027-03-31"]),
    ("biweekly", 30, ["2027-01-31", "2028-02-15"]),
    ("weekly", 60, ["2027-02-28", "2027-12-29"]),
    ("semimonthly", 30, ["2027-01-05", "2027-01-20", "2027-01-15", "2027-01-30", "2027-01-16", "2027-01-31",
                         "2027-02-01", "2028-01-31", "2028-02-15", "2028-01-30", "2027-02-28", "2028-02-29",
                         "2027-12-31", "2027-02-14", "2028-02-16"]),
]:
    for _first in _firsts:
        DATE_CASES.append((_frequency, _n, _first))


def check_dates(rep: Report, name: str, frequency: str, n: int, first: str):
    url, j = schedule(BASE, {"principal": "100000", "annual_rate_percent": "6", "term_payments": str(n),
                             "payment_frequency": frequency, "first_payment_date": first})
    # reference: QuantLib Schedule Forward (NullCalendar, Unadjusted, endOfMonth=False); semimonthly:
    # two QuantLib monthly Schedules (days d and d ± 15) merged
    want = [d.ISO() for d in reference_dates(qd(first), n, frequency)]
    got = [row["date"] for row in j["schedule"]]
    source = ("QuantLib Schedule Forward" if frequency != "semimonthly"
              else "two QuantLib monthly schedules merged")
    if got == want:
        # reference: QuantLib Schedule (Forward, NullCalendar, Unadjusted, endOfMonth=False)
        rep.check(name, True, f"{n} dates equal {source} ({want[0]} … {want[-1]})")
        return
    if len(got) != len(want):
        rep.check(name, False, f"{len(got)} rows, {source} has {len(want)} dates", url)
        return
    k = next(i for i, (a, b) in enumerate(zip(got, want)) if a != b)
    bad = sum(a != b for a, b in zip(got, want))
    rep.check(name, False, f"{bad} of {n} dates differ; first at row {k + 1}: server {got[k]}, {source} {want[k]}"
              f" (rows {k}–{k + 2}: server {got[max(0, k - 1):k + 2]}, reference {want[max(0, k - 1):k + 2]})", url)


# --------------------------------------------------------------------------
# 2. Odd days: every frequency, every day count
# --------------------------------------------------------------------------

# (frequency, funding date, first payment date)
ODD_PAIRS = [
    ("monthly", "2027-01-31", "2027-03-31"),      # previous 28 Feb
    ("monthly", "2028-01-15", "2028-03-29"),      # previous 29 Feb (leap)
    ("monthly", "2027-02-28", "2027-04-30"),      # from the last of February to the 30th
    ("monthly", "2028-02-29", "2028-04-30"),
    ("monthly", "2027-07-20", "2027-08-05"),      # funded after the previous due date
    ("quarterly", "2027-01-31", "2027-05-31"),    # previous 28 Feb
    ("quarterly", "2027-11-30", "2028-05-31"),    # previous 29 Feb 2028
    ("quarterly", "2027-06-15", "2027-07-10"),    # funded after 10 April
    ("quarterly", "2027-10-31", "2028-03-31"),    # previous 31 Dec
    ("semiannual", "2027-08-31", "2028-08-31"),   # previous 29 Feb 2028
    ("semiannual", "2026-12-31", "2027-08-31"),   # previous 28 Feb 2027
    ("semiannual", "2027-01-05", "2027-07-20"),
    ("semiannual", "2027-03-31", "2027-09-30"),   # funded the day after the previous due date
    ("annual", "2027-02-28", "2028-02-29"),       # previous 28 Feb 2027: no odd days
    ("annual", "2027-03-01", "2028-02-29"),       # funded the day after it
    ("annual", "2026-12-30", "2027-12-31"),
    ("annual", "2027-06-30", "2028-06-15"),
    ("semimonthly", "2027-01-31", "2027-03-15"),  # 15th/30th: previous 28 Feb
    ("semimonthly", "2028-01-30", "2028-03-16"),  # 1st/16th: previous 1 Mar
    ("semimonthly", "2028-02-10", "2028-03-14"),  # 14th/29th: previous 29 Feb 2028
    ("semimonthly", "2027-02-10", "2027-03-14"),  # 14th/29th: previous 28 Feb 2027
    ("semimonthly", "2027-05-31", "2027-06-30"),  # 15th/30th: previous 15 Jun
    ("semimonthly", "2027-04-25", "2027-05-01"),  # 1st/16th: funded after 16 Apr
    ("semimonthly", "2027-12-20", "2028-01-31"),  # 16th/31st: previous 16 Jan
    ("biweekly", "2027-01-31", "2027-03-14"),     # previous 28 Feb
    ("biweekly", "2028-02-29", "2028-03-28"),     # previous 14 Mar
    ("biweekly", "2027-03-31", "2027-04-10"),     # funded after 27 Mar
    ("biweekly", "2027-01-30", "2027-03-31"),
    ("weekly", "2027-02-28", "2027-03-31"),       # previous 24 Mar
    ("weekly", "2028-02-29", "2028-03-14"),       # previous 7 Mar
    ("weekly", "2027-12-31", "2028-01-08"),       # previous 1 Jan
    ("weekly", "2027-03-31", "2027-04-02"),       # funded after 26 Mar
]
LOAN_SIZES = [("187500", "6.875"), ("250000", "5.25"), ("99999.99", "7.99"), ("1234567.89", "12.5"),
              ("42000", "3.333")]

# The three reproductions: (query, expected odd days named in the bug reports).
REPRODUCTIONS = [
    ({"principal": "187500", "annual_rate_percent": "6.875", "term_payments": "30",
      "payment_frequency": "semimonthly", "funding_date": "2027-02-20", "first_payment_date": "2027-03-05",
      "day_count": "actual_365"}, 0),
    ({"principal": "187500", "annual_rate_percent": "6.875", "term_payments": "30",
      "payment_frequency": "semimonthly", "funding_date": "2027-03-20", "first_payment_date": "2027-04-05",
      "day_count": "actual_365"}, 0),
    ({"principal": "187500", "annual_rate_percent": "6.875", "term_payments": "30",
      "payment_frequency": "semimonthly", "funding_date": "2027-01-03", "first_payment_date": "2027-02-15",
      "day_count": "thirty_360"}, 27),
]


def check_odd_days(rep: Report, name: str, query: dict, expected_days=None):
    frequency, day_count = query["payment_frequency"], query["day_count"]
    funding, first = qd(query["funding_date"]), qd(query["first_payment_date"])
    previous = reference_previous(first, frequency)
    want, source = reference_days(day_count, funding, previous)
    url, j = schedule(BASE, query)
    s = j["summary"]
    got = s["odd_days"]
    stated = next((m.group(1) for note in j["notes"] for m in [STATED_PREVIOUS.search(note)] if m), None)
    detail = (f"odd_days {got}, {source} = {want}"
              + (f"; the reproduction expects {expected_days}" if expected_days is not None else ""))
    if got != want and stated is not None and stated != previous.ISO():
        detail += f"; the server's note counts to {stated}, the reference previous due date is {previous.ISO()}"
    ok = got == want and (expected_days is None or want == expected_days)
    # reference: QuantLib day counter (see DAY_COUNTS) from funding to QuantLib's previous due date
    rep.check(name + " odd days", ok, detail, "" if ok else url)
    basis = DAY_COUNTS[day_count][1]
    interest = odd_interest(query["principal"], query["annual_rate_percent"], want, basis)
    got_interest = Decimal(s["odd_days_interest"])
    # reference: principal × rate/100 × QuantLib's odd days / basis, Decimal, half up to the cent
    rep.check(name + " odd-days interest", got_interest == interest,
              f"{s['odd_days_interest']}, formula with {want} days / {basis}: {interest}",
              "" if got_interest == interest else url)


def odd_day_cases():
    i = 0
    for frequency, funding, first in ODD_PAIRS:
        for day_count in FIVE_DAY_COUNTS:
            principal, rate = LOAN_SIZES[i % len(LOAN_SIZES)]
            i += 1
            q = {"principal": principal, "annual_rate_percent": rate, "term_payments": "12",
                 "payment_frequency": frequency, "funding_date": funding, "first_payment_date": first,
                 "day_count": day_count}
            yield f"odd {frequency} {day_count} {funding}→{first}", q, None
    for n, (q, days) in enumerate(REPRODUCTIONS):
        yield (f"reproduction {n + 1}: semimonthly {q['day_count']} {q['funding_date']}→"
               f"{q['first_payment_date']}"), q, days


# --------------------------------------------------------------------------
# 3. The 30/360 variants on month ends
# --------------------------------------------------------------------------

# (funding date d1, previous due date d2): month ends, 28/29 February, 30th and 31st.
THIRTY_PAIRS = [
    ("2027-02-28", "2027-03-30"),  # bond basis 32, US 30
    ("2027-02-28", "2027-03-31"),
    ("2027-02-28", "2027-04-30"),
    ("2027-02-28", "2027-08-31"),
    ("2028-02-29", "2028-03-30"),
    ("2028-02-29", "2028-03-31"),
    ("2028-02-29", "2028-04-30"),
    ("2028-02-28", "2028-03-31"),  # 28 Feb of a leap year is no month end
    ("2027-02-27", "2027-02-28"),
    ("2027-01-31", "2027-02-28"),
    ("2028-01-31", "2028-02-29"),
    ("2027-01-30", "2027-03-31"),
    ("2027-01-29", "2027-03-31"),
    ("2027-03-31", "2027-04-30"),
    ("2027-05-31", "2027-07-31"),
    ("2027-06-30", "2027-07-31"),
    ("2027-06-29", "2027-07-31"),
    ("2027-11-30", "2027-12-31"),
    ("2027-10-31", "2027-12-31"),
    ("2027-12-31", "2028-02-29"),
    ("2027-08-31", "2028-02-29"),
    ("2027-03-31", "2027-03-30"),  # funded after the previous due date
    ("2027-03-01", "2027-02-28"),
    ("2028-03-05", "2028-02-29"),
    ("2027-08-31", "2027-08-30"),
]
THIRTY_VARIANTS = ["thirty_360_bond_basis", "thirty_360_us", "thirty_e_360", "thirty_360"]
# Values worked by hand from ISDA 4.16(f)/(g) and the SIA rule, as a check on the reference itself.
BY_HAND = {("2027-02-28", "2027-03-30"): {"thirty_360_bond_basis": 32, "thirty_360_us": 30,
                                          "thirty_e_360": 32, "thirty_360": 32}}


def first_payment_after(previous: ql.Date) -> tuple[str, ql.Date]:
    """A frequency and first payment whose previous due date is `previous`:
    monthly when QuantLib's month arithmetic comes back to it, else weekly."""
    first = previous + ql.Period(1, ql.Months)
    if reference_previous(first, "monthly") == previous:
        return "monthly", first
    return "weekly", previous + ql.Period(1, ql.Weeks)


def thirty_cases():
    for d1, d2 in THIRTY_PAIRS:
        frequency, first = first_payment_after(qd(d2))
        for day_count in THIRTY_VARIANTS:
            q = {"principal": "360000", "annual_rate_percent": "6", "term_payments": "6",
                 "payment_frequency": frequency, "funding_date": d1, "first_payment_date": first.ISO(),
                 "day_count": day_count}
            yield f"30/360 {day_count} {d1}→{d2} ({frequency}, first {first.ISO()})", q, (d1, d2)


def check_thirty(rep: Report, name: str, query: dict, pair: tuple):
    d1, d2 = pair
    day_count = query["day_count"]
    previous = reference_previous(qd(query["first_payment_date"]), query["payment_frequency"])
    first = qd(query["first_payment_date"])
    if previous.ISO() != d2 or not (qd(d1) < first and first - qd(d1) <= 366):
        rep.check(name, False, f"the case is wrong: QuantLib's previous due date is {previous.ISO()} (want {d2}),"
                  f" and the first payment must fall after funding, within 366 days")
        return
    want, source = reference_days(day_count, qd(d1), previous)
    hand = BY_HAND.get(pair, {}).get(day_count)
    if hand is not None and hand != want:
        rep.check(name, False, f"QuantLib says {want}, worked by hand {hand}: the reference itself is off")
        return
    url, j = schedule(BASE, query)
    got = j["summary"]["odd_days"]
    first_row = j["schedule"][0]["date"]
    ok = got == want and first_row == query["first_payment_date"]
    # reference: QuantLib Thirty360(BondBasis / USA / European).dayCount(d1, d2)
    rep.check(name, ok, f"odd_days {got}, {source} = {want}"
              + (f" (by hand {hand})" if hand is not None else "")
              + ("" if first_row == query["first_payment_date"] else f"; first row dated {first_row}"),
              "" if ok else url)


# --------------------------------------------------------------------------
# 4. Level payments, balances, first-period split and counts against numpy-financial
# --------------------------------------------------------------------------

PRINCIPALS = ["100000", "250000", "18500", "3999.99", "640000", "123456.78", "1500"]
RATES = ["0", "3.5", "6.875", "12", "24.99"]
TERMS = [("monthly", 360), ("monthly", 60), ("monthly", 13), ("quarterly", 40), ("semiannual", 20),
         ("annual", 10), ("semimonthly", 48), ("semimonthly", 720), ("biweekly", 78), ("biweekly", 26),
         ("weekly", 104), ("weekly", 520)]
# Long terms take the larger principals: with a payment of a few dollars, the
# rounding of the payment (½ cent, grown over 500 periods at 1 % or more) can move
# the count of a small loan by one either way, and the case says nothing clear.
LARGE = ["100000", "250000", "640000", "123456.78", "187500"]
TERM_CASES = []
for _i, ((_frequency, _n), _rate) in enumerate((t, r) for t in TERMS for r in RATES):
    _principals = LARGE if _n >= 360 else PRINCIPALS
    TERM_CASES.append((_principals[_i % len(_principals)], _rate, _frequency, _n))

# (principal, annual rate %, frequency, payment)
PAYMENT_CASES = [
    ("100000", "6", "monthly", "1000"), ("100000", "6", "monthly", "655"), ("250000", "6.875", "monthly", "2000"),
    ("18500", "8.49", "monthly", "333.33"), ("100000", "0", "monthly", "1000"), ("100000", "0", "monthly", "999"),
    ("1500", "0", "weekly", "40"), ("640000", "4.25", "quarterly", "12000"), ("50000", "12", "biweekly", "400"),
    ("50000", "3.5", "weekly", "125"), ("123456.78", "24.99", "semimonthly", "1500"),
    ("80000", "5", "annual", "9000"), ("80000", "5", "semiannual", "4500"),
    ("300000", "7.125", "semimonthly", "1100"), ("9999.99", "19.9", "monthly", "250"),
]


def compounded_bound(r: Decimal, k: int) -> Decimal:
    """½ cent · Σ_{j<k} (1 + r)^j + 1 cent: each period's rounded interest, grown to row k."""
    growth = Decimal(k) if r == 0 else ((1 + r) ** k - 1) / r
    return HALF_CENT * growth + CENT


def reference_count(r: Decimal, payment: Decimal, p: Decimal) -> tuple[int, str]:
    """How many payments of `payment` repay `p` at r a period, and what said so.

    Raises ValueError when the count is not clear-cut: when the exact balance
    after ⌈payments_needed⌉ − 1 payments is not clearly above zero, or after ⌈payments_needed⌉
    payments not clearly below it, the ledger's rounding of interest (within
    compounded_bound) may decide either way. At rate 0 nothing is rounded.
    """
    if r == 0:
        exact = p / payment
        # reference: principal / payment (numpy-financial 1.0.0's payments_needed answers it with the wrong sign at rate 0)
        return math.ceil(exact), f"⌈principal / payment⌉ = ⌈{exact:.6f}⌉"
    # reference: numpy-financial payments_needed(r, -payment, principal), float64 (Decimal has no log)
    exact = float(payments_needed(float(r), -float(payment), float(p)))
    count = math.ceil(exact)
    before = dec(balance_after, r, count - 1, payment, -p)
    after = dec(balance_after, r, count, payment, -p)
    if not (before > compounded_bound(r, count - 1) and -after > compounded_bound(r, count)):
        raise ValueError(f"not clear-cut: payments_needed {exact:.6f}, balance_after {before:.4f} after {count - 1} payments"
                         f" and {after:.4f} after {count}, beside a rounding bound of"
                         f" {compounded_bound(r, count):.4f}")
    return count, f"⌈payments_needed⌉ = ⌈{exact:.6f}⌉"


def check_term(rep: Report, name: str, principal: str, rate: str, frequency: str, n: int):
    url, j = schedule(BASE, {"principal": principal, "annual_rate_percent": rate, "term_payments": str(n),
                             "payment_frequency": frequency})
    s, rows = j["summary"], j["schedule"]
    p, r = Decimal(principal), Decimal(rate) / 100 / PER_YEAR[frequency]
    payment = Decimal(s["payment"])

    want = half_up(dec(level_payment, r, n, -p))
    # reference: numpy-financial level_payment(r, n, -principal), Decimal, rounded half up to the cent
    rep.check(name + " payment", payment == want, f"{s['payment']}, level_payment {want}", "" if payment == want else url)

    # The count: n, unless the rounded payment (rounded up, at a long term and a high
    # rate) repays the loan sooner; then payments_needed of the rounded payment says when.
    ahead = dec(balance_after, r, n - 1, payment, -p)
    if ahead > compounded_bound(r, n - 1):
        # reference: numpy-financial balance_after(r, n - 1, payment, -principal) > 0: a balance is left for payment n
        m, source = n, f"the term (balance_after after {n - 1} payments is {ahead:.2f})"
    else:
        m, source = reference_count(r, payment, p)
        source += f" for the rounded payment (balance_after after {n - 1} payments is {ahead:.2f})"
    ok = len(rows) == m and s["number_of_payments"] == m
    rep.check(name + " count", ok, f"number_of_payments {s['number_of_payments']}, {len(rows)} rows, {m} by {source}",
              "" if ok else url)
    if not ok:
        return

    worst, worst_k, excess = Decimal(0), 0, None
    fvs = [dec(balance_after, r, k, payment, -p) for k in range(1, m + 1)]
    for k in range(1, m):
        diff = abs(Decimal(rows[k - 1]["balance"]) - fvs[k - 1])
        bound = compounded_bound(r, k)
        if diff > worst:
            worst, worst_k = diff, k
        if diff > bound and excess is None:
            excess = (k, rows[k - 1]["balance"], fvs[k - 1], bound)
    if excess is None:
        # reference: numpy-financial balance_after(r, k, payment, -principal) after each row k < m
        rep.check(name + " balances", True, f"rows 1–{m - 1} within the rounding bound of balance_after;"
                  f" largest difference {worst:.4f} at row {worst_k}")
    else:
        k, got, exact, bound = excess
        rep.check(name + " balances", False, f"row {k} balance {got}, balance_after {exact:.6f},"
                  f" difference {abs(Decimal(got) - exact):.6f} > bound {bound:.6f}", url)

    # The final payment clears the rounded balance: final − payment ≈ balance_after at m.
    final_gap = Decimal(s["final_payment"]) - payment
    bound = compounded_bound(r, m)
    ok = abs(final_gap - fvs[m - 1]) <= bound
    # reference: numpy-financial balance_after(r, m, payment, -principal), what the last payment must add or leave out
    rep.check(name + " final payment", ok, f"{s['final_payment']} − {s['payment']} = {final_gap},"
              f" balance_after at {m} {fvs[m - 1]:.6f} (bound {bound:.4f})", "" if ok else url)

    first = rows[0]
    want_i = dec(interest_part, r, 1, n, -p)
    want_p = dec(principal_part, r, 1, n, -p)
    di = abs(Decimal(first["interest"]) - want_i)
    dp = abs(Decimal(first["principal"]) - want_p)
    ok = di <= CENT and dp <= CENT
    # reference: numpy-financial interest_part(r, 1, n, -principal) and principal_part(r, 1, n, -principal)
    rep.check(name + " first row split", ok, f"interest {first['interest']} (interest_part {want_i:.6f}),"
              f" principal {first['principal']} (principal_part {want_p:.6f}), within 0.01", "" if ok else url)


def check_by_payment(rep: Report, name: str, principal: str, rate: str, frequency: str, payment: str):
    p, r, pay = Decimal(principal), Decimal(rate) / 100 / PER_YEAR[frequency], Decimal(payment)
    want, source = reference_count(r, pay, p)
    url, j = schedule(BASE, {"principal": principal, "annual_rate_percent": rate, "payment": payment,
                             "payment_frequency": frequency})
    got = j["summary"]["number_of_payments"]
    rep.check(name, got == want, f"number_of_payments {got}, {source}", "" if got == want else url)


# --------------------------------------------------------------------------


BASE = ""


def main() -> int:
    global BASE
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--base-url", default="http://127.0.0.1:18531")
    args = parser.parse_args()
    BASE = args.base_url.rstrip("/")
    rep = Report()
    t0 = time.time()

    for frequency, n, first in DATE_CASES:
        run_case(rep, f"dates {frequency} ×{n} from {first}", check_dates, frequency, n, first)
    for name, query, expected in odd_day_cases():
        run_case(rep, name, check_odd_days, query, expected)
    for name, query, pair in thirty_cases():
        run_case(rep, name, check_thirty, query, pair)
    for principal, rate, frequency, n in TERM_CASES:
        run_case(rep, f"npf {principal} at {rate} % {frequency} ×{n}", check_term, principal, rate, frequency, n)
    for principal, rate, frequency, payment in PAYMENT_CASES:
        run_case(rep, f"npf count {principal} at {rate} % {frequency} paying {payment}", check_by_payment,
                 principal, rate, frequency, payment)

    print(f"      ({time.time() - t0:.1f} s)")
    print(f"conventions: {rep.passed} passed, {rep.failed} failed")
    return 1 if rep.failed else 0


if __name__ == "__main__":
    sys.exit(main())
