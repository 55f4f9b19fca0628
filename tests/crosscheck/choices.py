#!/usr/bin/env python3
"""Cross-check the payment grid, the rate-and-points options and the refinance analysis against outside references.

Three operations are asked chosen and seeded-random questions, and every figure
of their answers is recomputed here by code that shares nothing with Residue:

* GET /api/v1/loans/grid (and .csv): every cell's level payment against
  numpy-financial 1.0.0 (`npf.pmt`, float64) and against the exact level payment
  P·i / (1 − (1 + i)^−n) computed in Python's `fractions.Fraction` and rounded
  half up to the cent; the payment per 1,000 against the factor per 1 rounded UP
  to five decimal places, as the amortization factor tables of 7 CFR 1942.19
  print it, with the three factors that 7 CFR 1942.19(e)(2)(i)–(iii) works
  through (100,000 at 5 % over 38 years: .05929 annual, .02952 semiannual,
  .00491 monthly); refusals of a bad range and of a grid over 2,000 cells.

* GET and POST /api/v1/loans/options: each option's posted ledger rebuilt here
  exactly (integers of cents, each month's interest = balance × rate / 1200
  rounded half up to the cent, the level payment rounded half up to the cent,
  the last payment the balance plus its interest: common practice, no source),
  its cost by month m = upfront + payments 1..m + balance after m, both
  break-evens, the cheapest option at each horizon and the months where the
  cheapest changes, on 30 seeded random option sets and the hand-worked case of
  200,000 at 6.75 % against 6.25 % with 2 points.

* GET and POST /api/v1/refinance: both loans' ledgers rebuilt the same way (the
  current loan from its balance, or as the tail of its original ledger after the
  payments made), the costs, both break-evens, the costs at each horizon and to
  the end, and "In 5 years" (12 CFR 1026.37(l)(1)), on 30 seeded random cases, a
  property (same rate and term, no costs: nothing changes) and a hand-worked case
  where a longer new term makes the simple break-even look early; refusals.

Usage: python tests/crosscheck/choices.py --base-url http://127.0.0.1:18531
Prints one line per check (the bulk checks of a grid or a random case as one line
each, counted one check per figure), naming the request and both values when they
differ, and ends with `choices: N passed, M failed`; exits 1 if any check failed.
"""

from __future__ import annotations

import argparse
import csv
import io
import json
import math
import random
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from decimal import Decimal
from fractions import Fraction

import numpy_financial as npf

# The reference library's function under this project's own word; the attribute
# name on the right is numpy-financial's published interface.
level_payment_float = npf.pmt

SEED = 20261205
GRID = "/api/v1/loans/grid"
OPTIONS = "/api/v1/loans/options"
REFINANCE = "/api/v1/refinance"
HORIZONS = [60, 84, 120]  # 5, 7 and 10 years, the horizons the operations document

# --------------------------------------------------------------------------
# Reporting and HTTP
# --------------------------------------------------------------------------


class Report:
    def __init__(self):
        self.passed = 0
        self.failed = 0
        self.observations: list[str] = []

    def check(self, name: str, ok: bool, detail: str, where: str = ""):
        if ok:
            self.passed += 1
            print(f"ok    {name}: {detail}", flush=True)
        else:
            self.failed += 1
            at = f"\n      {where}" if where else ""
            print(f"FAIL  {name}: {detail}{at}", flush=True)

    def bulk(self, name: str, failures: list[str], count: int, where: str = ""):
        """`count` checks of which `failures` (descriptions) failed, reported as one line."""
        self.passed += count - len(failures)
        self.failed += len(failures)
        if not failures:
            print(f"ok    {name}: {count} figures agree", flush=True)
        else:
            shown = "\n      ".join(failures[:12])
            more = f"\n      … and {len(failures) - 12} more" if len(failures) > 12 else ""
            at = f"\n      {where}" if where else ""
            print(f"FAIL  {name}: {len(failures)} of {count} figures differ{at}\n      {shown}{more}", flush=True)


class Answer:
    def __init__(self, status: int, headers: dict, body: bytes, where: str):
        self.status, self.headers, self.body, self.where = status, headers, body, where

    def json(self):
        return json.loads(self.body)

    def pointers(self) -> list[str]:
        try:
            return [e.get("pointer") for e in self.json().get("errors", [])]
        except Exception:  # noqa: BLE001 - not problem details
            return []


def _ask(req: urllib.request.Request, where: str) -> Answer:
    try:
        with urllib.request.urlopen(req, timeout=60) as r:
            return Answer(r.status, {k.lower(): v for k, v in r.headers.items()}, r.read(), where)
    except urllib.error.HTTPError as e:
        return Answer(e.code, {k.lower(): v for k, v in e.headers.items()}, e.read(), where)


def get(path: str, pairs) -> Answer:
    url = BASE + path + "?" + urllib.parse.urlencode(pairs)
    return _ask(urllib.request.Request(url), f"GET {url}")


def post(path: str, body: dict) -> Answer:
    data = json.dumps(body).encode()
    req = urllib.request.Request(BASE + path, data=data, method="POST",
                                 headers={"content-type": "application/json"})
    return _ask(req, f"POST {BASE + path} {data.decode()}")


class HttpProblem(Exception):
    pass


def ok_json(a: Answer):
    if a.status != 200:
        raise HttpProblem(f"HTTP {a.status}: {a.body[:400].decode('utf-8', 'replace')}\n      {a.where}")
    return a.json()


def run_case(rep: Report, name: str, fn, *args):
    """A crash or an error answer in one case is one failure; the rest go on."""
    try:
        fn(rep, name, *args)
    except HttpProblem as e:
        rep.check(name, False, str(e))
    except Exception as e:  # noqa: BLE001 - a failure of any kind fails the case
        rep.check(name, False, f"{type(e).__name__}: {e}")


# --------------------------------------------------------------------------
# The exact reference: amounts are integers of cents, rates Fractions
# --------------------------------------------------------------------------


def cents(text) -> int:
    """An answer's decimal string as whole cents (it must have no finer digits)."""
    d = Decimal(str(text)) * 100
    if d != d.to_integral_value():
        raise ValueError(f"{text!r} is not a whole number of cents")
    return int(d)


def half_up(x: Fraction) -> int:
    """x rounded to a whole number, halves away from zero (Python decimal's ROUND_HALF_UP)."""
    if x >= 0:
        return math.floor(x + Fraction(1, 2))
    return -math.floor(-x + Fraction(1, 2))


def show(c) -> str:
    if c is None:
        return "null"
    sign = "-" if c < 0 else ""
    return f"{sign}{abs(c) // 100}.{abs(c) % 100:02d}"


def exact_payment(principal_c: int, i: Fraction, n: int) -> Fraction:
    """The level payment P·i / (1 − (1 + i)^−n) in cents, exactly (the annuity
    formula: common practice, no source; numpy-financial's level payment is the same formula)."""
    if i == 0:
        return Fraction(principal_c, n)
    return principal_c * i / (1 - (1 + i) ** -n)


class Ledger:
    """A posted level-payment loan, month by month, in cents (common practice, no source):
    interest = balance × i rounded half up to the cent, principal = payment − interest,
    the last payment (the n-th, or the first that would repay the balance) is the
    balance plus its interest."""

    def __init__(self, principal_c: int, rate_percent: Fraction, n: int):
        i = rate_percent / 1200
        self.principal = principal_c
        self.exact_payment = exact_payment(principal_c, i, n)
        self.payment = half_up(self.exact_payment)
        self.paid = [0]  # payments 1..m
        self.owed = [principal_c]  # balance after payment m
        self.interest = 0
        b, k = principal_c, 0
        while b > 0:
            k += 1
            interest = half_up(b * i)
            if interest >= self.payment and k < n:
                raise ValueError("the payment does not cover the interest")
            self.interest += interest
            if k == n or b + interest <= self.payment:
                pay, b = b + interest, 0
            else:
                pay, b = self.payment, b + interest - self.payment
            self.paid.append(self.paid[-1] + pay)
            self.owed.append(b)

    @property
    def months(self) -> int:
        return len(self.paid) - 1

    def tail(self, k: int) -> "Tail":
        return Tail(self, k)


class Tail:
    """What is left of a ledger after its k-th payment, renumbered from 1."""

    def __init__(self, led: Ledger, k: int):
        self.payment = led.payment
        self.principal = led.owed[k]
        self.paid = [p - led.paid[k] for p in led.paid[k:]]
        self.owed = led.owed[k:]
        self.interest = self.paid[-1] - self.principal

    @property
    def months(self) -> int:
        return len(self.paid) - 1


class Path:
    """One way of paying: cost(m) = upfront + payments 1..m + balance after m (the
    definition both operations state; common practice, no source)."""

    def __init__(self, upfront: int, led):
        self.upfront, self.led = upfront, led

    @property
    def months(self) -> int:
        return self.led.months

    def paid(self, m: int) -> int:
        return self.led.paid[min(m, self.led.months)]

    def owed(self, m: int) -> int:
        return self.led.owed[m] if m <= self.led.months else 0

    def cost(self, m: int) -> int:
        return self.upfront + self.paid(m) + self.owed(m)


def simple_break_even(extra_upfront: int, saving: int):
    """⌈extra upfront ÷ monthly saving⌉ (common practice, no source: consumer booklets'
    break-even); 0 when nothing extra is paid upfront, None when nothing is saved."""
    if extra_upfront <= 0:
        return 0
    if saving <= 0:
        return None
    return -(-extra_upfront // saving)


def balance_break_even(dearer: Path, other: Path):
    """The first month m ≥ 0 at which the way that cost more upfront has cost no more
    than the other, balances counted (the operations' stated definition)."""
    end = max(dearer.months, other.months)
    return next((m for m in range(end + 1) if dearer.cost(m) <= other.cost(m)), None)


def horizons(chosen):
    """The horizons costed, in month order (the operations' documented order)."""
    h = list(HORIZONS)
    if chosen is not None and chosen not in h:
        h.append(chosen)
    return sorted(h)


def within(months, loan_months):
    """A simple break-even after the loan that would recover the costs has ended is none."""
    return months if months is not None and months <= loan_months else None


def points_c(percent: Fraction, principal_c: int) -> int:
    """Points in money: percent × principal / 100, half up to the cent (common practice, no source)."""
    return half_up(percent * principal_c / 100)


class Diff:
    """Collects figure-by-figure comparisons of one answer."""

    def __init__(self):
        self.count = 0
        self.failures: list[str] = []

    def eq(self, what: str, got, want):
        self.count += 1
        if got != want:
            self.failures.append(f"{what}: API {got!r}, reference {want!r}")

    def money(self, what: str, got_text, want_c):
        self.count += 1
        try:
            got = None if got_text is None else cents(got_text)
        except Exception as e:  # noqa: BLE001
            self.failures.append(f"{what}: API {got_text!r} unreadable ({e})")
            return
        if got != want_c:
            self.failures.append(f"{what}: API {got_text}, reference {show(want_c)}")


# --------------------------------------------------------------------------
# 1. The payment grid
# --------------------------------------------------------------------------

PER_YEAR = {"annual": 1, "semiannual": 2, "monthly": 12}


def per_thousand_ref(i: Fraction, n: int) -> int:
    """The payment per 1,000 in cents: the factor per 1, i / (1 − (1 + i)^−n), rounded
    UP to five decimal places and times 1,000 (7 CFR 1942.19(e)(2): the amortization
    factor tables print five decimals and the payment is the factor times the note)."""
    factor = i / (1 - (1 + i) ** -n)
    return math.ceil(factor * 10**5)  # ceil(factor·10^5)/10^5 × 1000 in cents is the same integer


def check_grid_cells(rep: Report, name: str, pairs, principals, rates, terms, frequency="monthly"):
    a = get(GRID, pairs)
    j = ok_json(a)
    cells = j["cells"]
    per_year = PER_YEAR[frequency]
    rep.check(f"{name}: one cell per principal × rate × term",
              len(cells) == len(principals) * len(rates) * len(terms),
              f"{len(cells)} cells for {len(principals)} × {len(rates)} × {len(terms)}", a.where)
    want_keys = {(cents(p), Fraction(r), t) for p in principals for r in rates for t in terms}
    got_keys = {(cents(c["principal"]), Fraction(c["annual_rate_percent"]), c["term_months"]) for c in cells}
    rep.check(f"{name}: the cells are the grid asked for", got_keys == want_keys,
              f"missing {sorted(want_keys - got_keys)[:5]}, extra {sorted(got_keys - want_keys)[:5]}", a.where)
    rep.check(f"{name}: payment_frequency echoed", j.get("payment_frequency") == frequency,
              f"{j.get('payment_frequency')!r}", a.where)
    rep.check(f"{name}: notes[0] is the caution", bool(j.get("notes")) and "not an offer of credit" in j["notes"][0],
              f"{(j.get('notes') or [''])[0][:60]!r}…", a.where)
    npf_d, exact_d, ptd_d = Diff(), Diff(), Diff()
    for c in cells:
        P = cents(c["principal"])
        rate = Fraction(c["annual_rate_percent"])
        n = c["term_months"] * per_year // 12
        i = rate / 100 / per_year
        exact = exact_payment(P, i, n)  # cents, exact
        key = f"{show(P)} at {c['annual_rate_percent']} % × {c['term_months']} months"
        # numpy-financial 1.0.0 level_payment_float(rate / per_year, n, −principal), float64: agrees with the
        # exact Fraction payment to 1e-6 of a dollar ...
        npf_pay = float(level_payment_float(float(rate) / 100 / per_year, n, -P / 100))
        npf_d.count += 1
        if abs(Fraction(npf_pay) - exact / 100) > Fraction(1, 10**6):
            npf_d.failures.append(f"{key}: numpy-financial {npf_pay!r}, exact {float(exact / 100)!r}")
        # ... and, rounded to the cent, equals the API's payment, unless the exact value sits within
        # 1e-6 of a half cent, where float64 cannot say which way it rounds (the Fraction decides).
        near_tie = abs(exact - math.floor(exact) - Fraction(1, 2)) < Fraction(1, 10**4)
        if not near_tie:
            npf_d.money(f"{key} payment (numpy-financial, rounded to the cent)", c["payment"],
                        int(Decimal(repr(npf_pay * 100)).quantize(Decimal(1), rounding="ROUND_HALF_UP")))
        # The exact level payment (annuity formula in Fractions, common practice, no source) half up.
        exact_d.money(f"{key} payment (exact Fraction, half up)", c["payment"], half_up(exact))
        exact_d.money(f"{key} principal", c["principal"], P)
        # 7 CFR 1942.19(e)(2): the factor per 1 rounded UP to 5 decimals, × 1,000, 2 decimals shown.
        ptd_d.money(f"{key} per_thousand", c["per_thousand"], per_thousand_ref(i, n))
        ptd_d.eq(f"{key} per_thousand shows 2 decimals", len(c["per_thousand"].split(".")[-1]), 2)
    rep.bulk(f"{name}: payments = numpy-financial's level payment rounded to the cent (and within 1e-6 of the exact value)",
             npf_d.failures, npf_d.count, a.where)
    rep.bulk(f"{name}: payments = exact Fraction P·i/(1−(1+i)^−n) half up to the cent", exact_d.failures,
             exact_d.count, a.where)
    rep.bulk(f"{name}: per_thousand = ⌈factor × 10^5⌉ / 100 (7 CFR 1942.19 five-decimal factors, rounded up)",
             ptd_d.failures, ptd_d.count, a.where)
    return j


def grid_range(lo: str, hi: str, step: str) -> list[str]:
    lo_, hi_, st = Fraction(lo), Fraction(hi), Fraction(step)
    out, r = [], lo_
    while r <= hi_:
        out.append(str(Decimal(r.numerator) / Decimal(r.denominator)))
        r += st
    return out


def check_grid_main(rep: Report, name: str):
    principals = ["300000", "150000"]
    rates = grid_range("6.000", "7.500", "0.125")  # 13 rates, both ends included
    terms = [12, 60, 120, 180, 240, 300, 360, 480]  # 2 × 13 × 8 = 208 cells
    pairs = [("principal", ",".join(principals)), ("rates", "6.000..7.500/0.125"),
             ("terms", ",".join(map(str, terms)))]
    j = check_grid_cells(rep, name, pairs, principals, rates, terms)
    # The CSV twin: the same cells, figure for figure, read by Python's csv module (RFC 4180).
    a = get(GRID + ".csv", pairs)
    if a.status != 200:
        raise HttpProblem(f"HTTP {a.status}\n      {a.where}")
    rows = list(csv.DictReader(io.StringIO(a.body.decode("utf-8"))))
    want = [{k: str(c[k]) for k in ("principal", "annual_rate_percent", "term_months", "payment", "per_thousand")}
            for c in j["cells"]]
    rep.check(f"{name}: the CSV answer has the JSON cells, in order", rows == want,
              f"{len(rows)} rows; first {rows[:1]} against {want[:1]}", a.where)
    rep.check(f"{name}: the CSV answer's residue-caution header is notes[0]",
              a.headers.get("residue-caution") == j["notes"][0], f"{a.headers.get('residue-caution')!r}"[:80], a.where)


def check_grid_cfr(rep: Report, name: str):
    # 7 CFR 1942.19(e)(2)(i)–(iii) (RD Instruction 1942-A): a loan of $100,000.00 at 5 % amortized
    # over 38 years: "$100,000.00 x .05929 = $5,929.00 annual payment due" (38 annual payments),
    # ".02952" for 38 × 2 = 76 semiannual payments, ".00491" for 38 × 12 = 456 monthly payments.
    # The exact factors are .0592842…, .0295196… and .0049029…: the printed ones are rounded UP
    # to five decimals (to the nearest, the first and last would print .05928 and .00490).
    for frequency, printed in (("annual", "59.29"), ("semiannual", "29.52"), ("monthly", "4.91")):
        pairs = [("principal", "100000"), ("rates", "5"), ("terms", "456"), ("payment_frequency", frequency)]
        a = get(GRID, pairs)
        j = ok_json(a)
        cell = j["cells"][0]
        rep.check(f"{name}: 100,000 at 5 % over 456 months paid {frequency}: per_thousand is the printed factor × 1,000",
                  cell["per_thousand"] == printed, f"API {cell['per_thousand']}, 7 CFR 1942.19(e)(2) {printed}", a.where)
        # The level payment itself is below the factor × principal (the factor is rounded up):
        # exact payment half up (annuity formula, common practice, no source).
        i = Fraction(5, 100 * PER_YEAR[frequency])
        n = 456 * PER_YEAR[frequency] // 12
        want = half_up(exact_payment(10_000_000, i, n))
        rep.check(f"{name}: 100,000 at 5 % over 456 months paid {frequency}: the payment is the exact level payment",
                  cents(cell["payment"]) == want and want <= cents(printed) * 100,
                  f"API {cell['payment']}, exact {show(want)}, factor × principal {Decimal(printed) * 100}", a.where)


def check_grid_frequencies(rep: Report, name: str):
    # Annual and semiannual grids: level_payment_float at rate/1 and rate/2 over term/12 and term/6 payments.
    for frequency in ("annual", "semiannual"):
        principals = ["250000", "99999.99"]
        rates = grid_range("3.000", "9.000", "0.375")
        terms = [120, 240, 360]
        pairs = [("principal", ",".join(principals)), ("rates", "3.000..9.000/0.375"),
                 ("terms", ",".join(map(str, terms))), ("payment_frequency", frequency)]
        check_grid_cells(rep, f"{name} {frequency}", pairs, principals, rates, terms, frequency)


def expect_refusal(rep: Report, name: str, a: Answer, pointer: str):
    pointers = a.pointers()
    rep.check(name, a.status == 422 and pointer in pointers,
              f"HTTP {a.status}, pointers {pointers} (want 422 naming {pointer!r})", a.where)


def check_grid_refusals(rep: Report, name: str):
    # An empty or backward step, and a grid over 2,000 cells, are refused naming `rates`
    # (the operation's documented limits).
    base = [("principal", "100000,200000"), ("terms", "120,240,360")]
    for rates in ("6..7/0", "6..7/-0.125", "6.000..7.500/0"):
        expect_refusal(rep, f"{name}: rates={rates} is refused naming rates",
                       get(GRID, base + [("rates", rates)]), "rates")
    # 2 principals × 361 rates × 3 terms = 2,166 cells > 2,000.
    expect_refusal(rep, f"{name}: 2,166 cells is refused naming rates",
                   get(GRID, base + [("rates", "1..10/0.025")]), "rates")
    # Exactly 2,000 cells is allowed: 5 principals × 100 rates × 4 terms.
    a = get(GRID, [("principal", "1000,2000,3000,4000,5000"), ("rates", "1.00..10.90/0.10"),
                   ("terms", "12,24,36,48")])
    n = len(a.json().get("cells", [])) if a.status == 200 else None
    rep.check(f"{name}: exactly 2,000 cells is answered", a.status == 200 and n == 2000, f"HTTP {a.status}, {n} cells",
              a.where)


# --------------------------------------------------------------------------
# 2. Rate-and-points options
# --------------------------------------------------------------------------


def options_reference(principal_c: int, term: int, options: list[dict], horizon):
    paths = []
    for o in options:
        led = Ledger(principal_c, Fraction(o["annual_rate_percent"]), term)
        pts = points_c(Fraction(o["points_percent"]), principal_c)
        paths.append((pts, Path(pts + cents(o["other_costs"]), led)))
    hs = horizons(horizon)
    out = []
    first = paths[0][1]
    for k, (pts, p) in enumerate(paths):
        r = {"points": pts, "upfront": p.upfront, "payment": p.led.payment, "path": p,
             "interest": p.led.interest, "end": p.months}
        if k == 0:
            r["difference"] = r["simple"] = r["balances"] = None
        else:
            r["difference"] = p.led.payment - first.led.payment
            extra = p.upfront - first.upfront
            # The option that costs more upfront recovers the difference through its lower payment.
            dearer, other = (p, first) if extra >= 0 else (first, p)
            r["simple"] = within(simple_break_even(abs(extra), other.led.payment - dearer.led.payment), dearer.months)
            r["balances"] = balance_break_even(dearer, other)
        out.append(r)
    end = max(p.months for _, p in paths)

    def least(m):  # the least cost at month m, the first listed on a tie
        costs = [p.cost(m) for _, p in paths]
        return costs.index(min(costs))

    cheapest = [(m, least(m)) for m in hs] + ([] if end in hs else [(end, least(end))])
    changes = []
    for m in range(end + 1):
        i = least(m)
        if not changes or changes[-1][1] != i:
            changes.append((m, i))
    return out, hs, cheapest, changes


def compare_options_answer(rep: Report, name: str, a: Answer, principal_c: int, term: int, options, horizon):
    j = ok_json(a)
    ref, hs, cheapest, changes = options_reference(principal_c, term, options, horizon)
    d = Diff()
    d.money("principal", j["principal"], principal_c)
    d.eq("number_of_payments", j["number_of_payments"], term)
    d.eq("number of options", len(j["options"]), len(options))
    labels = [o["label"] for o in options]
    for o, r, got in zip(options, ref, j["options"]):
        lab = o["label"]
        d.eq(f"{lab} label", got["label"], lab)
        d.money(f"{lab} points", got["points"], r["points"])
        d.money(f"{lab} upfront_cost", got["upfront_cost"], r["upfront"])
        d.money(f"{lab} payment", got["payment"], r["payment"])
        d.money(f"{lab} monthly_difference", got["monthly_difference"], r["difference"])
        d.eq(f"{lab} break_even_months", got["break_even_months"], r["simple"])
        d.eq(f"{lab} break_even_months_with_balances", got["break_even_months_with_balances"], r["balances"])
        d.eq(f"{lab} costs months", [c["months"] for c in got["costs"]], hs)
        p = r["path"]
        for c, m in zip(got["costs"], hs):
            d.money(f"{lab} paid at {m}", c["paid"], p.upfront + p.paid(m))
            d.money(f"{lab} owed at {m}", c["owed"], p.owed(m))
            d.money(f"{lab} cost at {m}", c["cost"], p.cost(m))
        d.money(f"{lab} cost_to_end", got["cost_to_end"], p.cost(r["end"]))
        d.money(f"{lab} total_interest", got["total_interest"], r["interest"])
    d.eq("cheapest", [(c["months"], c["label"]) for c in j["cheapest"]], [(m, labels[i]) for m, i in cheapest])
    d.eq("cheapest_changes", [(c["months"], c["label"]) for c in j["cheapest_changes"]],
         [(m, labels[i]) for m, i in changes])
    rep.bulk(name, d.failures, d.count, a.where)
    return j


def options_query(principal: str, term: int, options: list[dict], horizon=None):
    pairs = [("principal", principal), ("term_months", str(term))]
    for o in options:
        pairs += [("option_label", o["label"]), ("option_rate_percent", o["annual_rate_percent"]),
                  ("option_points_percent", o["points_percent"]), ("option_other_costs", o["other_costs"])]
    if horizon is not None:
        pairs.append(("horizon_months", str(horizon)))
    return pairs


def options_body(principal: str, term: int, options: list[dict], horizon=None):
    body = {"principal": principal, "term_months": term, "options": options}
    if horizon is not None:
        body["horizon_months"] = horizon
    return body


def check_options_hand_worked(rep: Report, name: str):
    # 200,000 over 360 months at 6.75 % with no points against 6.25 % with 2 points.
    # Hand-worked (the annuity formula, common practice, no source; numpy-financial agrees:
    # level_payment_float(0.0675/12, 360, -200000) = 1297.1969…, level_payment_float(0.0625/12, 360, -200000) = 1231.4266…):
    # payments 1,297.20 and 1,231.43, 65.77 less a month; 2 % × 200,000 = 4,000.00 of points;
    # simple break-even ⌈4000 / 65.77⌉ = ⌈60.82⌉ = 61 months (common practice, no source).
    options = [
        {"label": "No points", "annual_rate_percent": "6.75", "points_percent": "0", "other_costs": "0"},
        {"label": "Two points", "annual_rate_percent": "6.25", "points_percent": "2", "other_costs": "0"},
    ]
    a = get(OPTIONS, options_query("200000", 360, options))
    j = compare_options_answer(rep, f"{name}: every figure against the exact ledger", a, 20_000_000, 360, options, None)
    two = j["options"][1]
    got = (j["options"][0]["payment"], two["payment"], two["monthly_difference"], two["points"], two["break_even_months"])
    rep.check(f"{name}: payments 1,297.20 and 1,231.43, 4,000 of points, 61 months (hand-worked)",
              got == ("1297.20", "1231.43", "-65.77", "4000.00", 61), f"{got}", a.where)
    rep.check(f"{name}: numpy-financial's payments round to 1,297.20 and 1,231.43",
              (round(float(level_payment_float(0.0675 / 12, 360, -200000)), 2),
               round(float(level_payment_float(0.0625 / 12, 360, -200000)), 2)) == (1297.20, 1231.43),
              "level_payment_float(0.0675/12, 360, -200000), level_payment_float(0.0625/12, 360, -200000)")
    b = post(OPTIONS, options_body("200000", 360, options))
    rep.check(f"{name}: the POST JSON twin answers the same", b.status == 200 and b.json() == j,
              f"HTTP {b.status}", b.where)


def random_rate(rng: random.Random, lo: float, hi: float) -> str:
    if rng.random() < 0.5:  # an eighth of a point, as rate sheets quote
        return str(Decimal(rng.randint(int(lo * 8), int(hi * 8))) / 8)
    return f"{rng.uniform(lo, hi):.3f}"


def random_principal(rng: random.Random, lo: int, hi: int) -> str:
    dollars = rng.randint(lo, hi)
    if rng.random() < 0.3:
        return f"{dollars}.{rng.randint(0, 99):02d}"
    return str(dollars)


def random_points(rng: random.Random) -> str:
    return str(Decimal(rng.randint(-8, 24)) / 8)  # −1 to 3 in eighths (ties of a half cent are frequent)


def check_options_random(rep: Report, name: str, k: int, rng_state):
    rng = random.Random(rng_state)
    principal = random_principal(rng, 80_000, 900_000)
    term = rng.choice([180, 240, 360])
    count = rng.randint(2, 6)
    options = []
    for j in range(count):
        free = rng.random() < 0.2  # no points and no other costs: equal upfront costs happen
        options.append({
            "label": f"Option {j + 1}",
            "annual_rate_percent": random_rate(rng, 3, 9),
            "points_percent": "0" if free else random_points(rng),
            "other_costs": "0" if free else f"{rng.randint(0, 300_000) / 100:.2f}",
        })
    horizon = rng.choice([None, None, rng.randint(1, 480), term])
    if k % 2 == 0:
        a = get(OPTIONS, options_query(principal, term, options, horizon))
    else:
        a = post(OPTIONS, options_body(principal, term, options, horizon))
    j = compare_options_answer(rep, f"{name} ({count} options, {principal} over {term})", a, cents(principal), term,
                               options, horizon)
    if k < 6:  # the other form of the same request answers the same
        b = (post(OPTIONS, options_body(principal, term, options, horizon)) if k % 2 == 0
             else get(OPTIONS, options_query(principal, term, options, horizon)))
        rep.check(f"{name}: the {'POST' if k % 2 == 0 else 'GET'} twin answers the same",
                  b.status == 200 and b.json() == j, f"HTTP {b.status}", b.where)


def check_options_refusals(rep: Report, name: str):
    one = [{"label": "Only", "annual_rate_percent": "6.5", "points_percent": "0", "other_costs": "0"}]
    a = get(OPTIONS, options_query("200000", 360, one))
    rep.check(f"{name}: a GET list of one option is refused naming the option fields",
              a.status == 422 and any(p and p.startswith("option_") for p in a.pointers()),
              f"HTTP {a.status}, pointers {a.pointers()}", a.where)
    expect_refusal(rep, f"{name}: a POST list of one option is refused naming /options",
                   post(OPTIONS, options_body("200000", 360, one)), "/options")
    seven = [dict(one[0], label=f"O{j}") for j in range(7)]
    expect_refusal(rep, f"{name}: a POST list of seven options is refused naming /options",
                   post(OPTIONS, options_body("200000", 360, seven)), "/options")


# --------------------------------------------------------------------------
# 3. Refinance
# --------------------------------------------------------------------------


def refinance_reference(case: dict):
    cur = case["current"]
    rate = Fraction(cur["annual_rate_percent"])
    if "balance" in cur:
        balance = cents(cur["balance"])
        led = Ledger(balance, rate, int(cur["remaining_payments"]))
        made = None
        closed = None
    else:
        original = Ledger(cents(cur["principal"]), rate, int(cur["term_months"]))
        made = int(cur["payments_made"])
        led = original.tail(made)
        balance = led.principal
        # The closed form's balance after k payments of the posted payment, unrounded
        # (common practice, no source): P(1+i)^k − payment·((1+i)^k − 1)/i, in dollars.
        i = rate / 1200
        g = (1 + i) ** made
        closed = (cents(cur["principal"]) * g - original.payment * (g - 1) / i) / 100 if i else \
            Fraction(cents(cur["principal"]) - original.payment * made, 100)
    financed = cents(case.get("financed_costs", "0"))
    if "principal" in case["new"]:
        new_principal = cents(case["new"]["principal"])
        cash_out = new_principal - balance - financed
    else:
        cash_out = cents(case.get("cash_out", "0"))
        new_principal = balance + financed + cash_out
    pts = points_c(Fraction(case.get("points_percent", "0")), new_principal)
    total = cents(case.get("closing_costs", "0")) + pts
    in_cash = total - financed
    new = Ledger(new_principal, Fraction(case["new"]["annual_rate_percent"]), int(case["new"]["term_months"]))
    cur_path = Path(0, led)
    new_path = Path(in_cash - cash_out, new)
    change = new.payment - led.payment
    with_bal = balance_break_even(new_path, cur_path)
    end = max(cur_path.months, new_path.months)
    again = None
    if with_bal is not None:
        again = next((m for m in range(with_bal + 1, end + 1) if new_path.cost(m) > cur_path.cost(m)), None)
    return {
        "balance": balance, "made": made, "closed": closed, "cur": cur_path, "new": new_path,
        "new_principal": new_principal, "points": pts, "total": total, "in_cash": in_cash,
        "financed": financed, "cash_out": cash_out, "change": change,
        "simple": within(simple_break_even(total, -change), new.months), "with_bal": with_bal, "again": again, "end": end,
        "hs": horizons(int(case["horizon_months"]) if "horizon_months" in case else None),
    }


def refinance_query(case: dict):
    pairs = [(f"current.{k}", str(v)) for k, v in case["current"].items()]
    pairs += [(k, str(v)) for k, v in case["new"].items()]
    for k in ("closing_costs", "points_percent", "financed_costs", "cash_out", "horizon_months"):
        if k in case:
            pairs.append((k, str(case[k])))
    return pairs


def compare_refinance_answer(rep: Report, name: str, a: Answer, case: dict):
    j = ok_json(a)
    r = refinance_reference(case)
    cur, new = r["cur"], r["new"]
    d = Diff()
    d.money("current_payment", j["current_payment"], cur.led.payment)
    d.money("new_payment", j["new_payment"], new.led.payment)
    d.money("monthly_change", j["monthly_change"], r["change"])
    d.eq("break_even_months", j["break_even_months"], r["simple"])
    d.eq("break_even_months_with_balances", j["break_even_months_with_balances"], r["with_bal"])
    # After breaking even, the first month the new loan costs more again (the answer's own
    # definition restated; common practice, no source).
    d.eq("costs_more_again_from_month", j["costs_more_again_from_month"], r["again"])
    c = j["current"]
    d.money("current.balance", c["balance"], r["balance"])
    d.money("current.payment", c["payment"], cur.led.payment)
    d.eq("current.remaining_payments", c["remaining_payments"], cur.months)
    d.eq("current.payments_made", c["payments_made"], r["made"])
    d.money("current.total_interest", c["total_interest"], cur.led.interest)
    d.money("current.total_paid", c["total_paid"], cur.paid(cur.months))
    if r["closed"] is None:
        d.eq("current.closed_form_balance", c["closed_form_balance"], None)
    else:
        d.count += 1
        got = c["closed_form_balance"]
        if got is None or abs(Fraction(Decimal(got)) - r["closed"]) > Fraction(1, 10**15):
            d.failures.append(f"current.closed_form_balance: API {got}, exact {float(r['closed'])!r}")
    n = j["new"]
    d.money("new.principal", n["principal"], r["new_principal"])
    d.money("new.payment", n["payment"], new.led.payment)
    d.eq("new.number_of_payments", n["number_of_payments"], new.months)
    d.money("new.total_interest", n["total_interest"], new.led.interest)
    d.money("new.total_paid", n["total_paid"], new.paid(new.months))
    k = j["costs"]
    d.money("costs.closing_costs", k["closing_costs"], cents(case.get("closing_costs", "0")))
    d.money("costs.points", k["points"], r["points"])
    d.money("costs.total_costs", k["total_costs"], r["total"])
    d.money("costs.financed_costs", k["financed_costs"], r["financed"])
    d.money("costs.paid_in_cash", k["paid_in_cash"], r["in_cash"])
    d.money("costs.cash_out", k["cash_out"], r["cash_out"])

    def horizon(label, h, m):
        d.eq(f"{label} months", h["months"], m)
        d.money(f"{label} current_paid", h["current_paid"], cur.upfront + cur.paid(m))
        d.money(f"{label} current_owed", h["current_owed"], cur.owed(m))
        d.money(f"{label} current_cost", h["current_cost"], cur.cost(m))
        d.money(f"{label} new_paid", h["new_paid"], new.upfront + new.paid(m))
        d.money(f"{label} new_owed", h["new_owed"], new.owed(m))
        d.money(f"{label} new_cost", h["new_cost"], new.cost(m))
        d.money(f"{label} refinancing_saves", h["refinancing_saves"], cur.cost(m) - new.cost(m))

    d.eq("horizons months", [h["months"] for h in j["horizons"]], r["hs"])
    for h, m in zip(j["horizons"], r["hs"]):
        horizon(f"horizon {m}", h, m)
    horizon("to_the_end", j["to_the_end"], r["end"])
    # "In 5 years" (12 CFR 1026.37(l)(1)(i) and (ii)): principal, interest and loan costs scheduled
    # through the 60th payment (the whole term when shorter), and the principal repaid by then.
    # The refinance's closing costs and points stand for the new loan's loan costs; the current
    # loan has none. A lender credit (negative points) is not a loan cost under 1026.37(f) (it is
    # disclosed apart, 1026.38(h)(3)), so it does not lower the loan costs counted here.
    five = j["in_five_years"]
    new_loan_costs = cents(case.get("closing_costs", "0")) + max(r["points"], 0)
    for label, p, principal, loan_costs in (("current", cur, r["balance"], 0),
                                            ("new", new, r["new_principal"], new_loan_costs)):
        t = min(p.months, 60)
        d.eq(f"in_five_years.{label}.through_payment", five[label]["through_payment"], t)
        d.money(f"in_five_years.{label}.principal_paid", five[label]["principal_paid"], principal - p.owed(t))
        d.money(f"in_five_years.{label}.total_paid", five[label]["total_paid"], p.paid(t) + loan_costs)
    rep.bulk(name, d.failures, d.count, a.where)
    return j, r


WHOLE = ("remaining_payments", "term_months", "payments_made", "horizon_months")


def refinance_body(case: dict):
    """The POST JSON twin: whole numbers as JSON numbers, amounts and rates as strings."""
    def typed(fields: dict):
        return {k: int(v) if k in WHOLE else v for k, v in fields.items()}
    body = {"current": typed(case["current"]), "new": typed(case["new"])}
    for k in ("closing_costs", "points_percent", "financed_costs", "cash_out", "horizon_months"):
        if k in case:
            body[k] = int(case[k]) if k in WHOLE else case[k]
    return body


def check_refinance_example(rep: Report, name: str):
    # The operation's own example: 187,500 at 7.25 % with 312 payments left, into 30 years at
    # 6.125 % with 3,200 of closing costs and 1 point.
    case = {"current": {"balance": "187500", "annual_rate_percent": "7.25", "remaining_payments": "312"},
            "new": {"annual_rate_percent": "6.125", "term_months": "360"},
            "closing_costs": "3200", "points_percent": "1", "financed_costs": "0", "cash_out": "0"}
    j, _ = compare_refinance_answer(rep, f"{name}: every figure against the exact ledgers", get(REFINANCE,
                                    refinance_query(case)), case)
    body = refinance_body(case)
    body["horizon_months"] = 96
    b = post(REFINANCE, body)
    jb = ok_json(b)
    rep.check(f"{name}: the POST JSON twin answers the same (and adds the 96-month horizon)",
              {k: v for k, v in jb.items() if k != "horizons"} == {k: v for k, v in j.items() if k != "horizons"}
              and [h for h in jb["horizons"] if h["months"] != 96] == j["horizons"] and [h["months"] for h in jb["horizons"]] == [60, 84, 96, 120],
              f"horizons {[h['months'] for h in jb['horizons']]}", b.where)


def check_refinance_fixed(rep: Report, name: str):
    # The current loan by its original terms (200,000 at 6 % over 360 months, 60 payments made:
    # the balance is the posted ledger's after payment 60), a lender credit of half a point,
    # part of the costs financed, cash out and a horizon of 8 years.
    case = {"current": {"principal": "200000", "annual_rate_percent": "6", "term_months": "360",
                        "payments_made": "60"},
            "new": {"annual_rate_percent": "5.5", "term_months": "300"},
            "closing_costs": "2000", "points_percent": "-0.5", "financed_costs": "1000", "cash_out": "5000",
            "horizon_months": "96"}
    compare_refinance_answer(rep, f"{name}: original terms, lender credit, financed costs, cash out",
                             get(REFINANCE, refinance_query(case)), case)
    # Cash brought to closing: a new principal 10,000 below the balance (cash_out −10,000).
    case = {"current": {"balance": "243210.55", "annual_rate_percent": "6.875", "remaining_payments": "333"},
            "new": {"annual_rate_percent": "5.999", "term_months": "240", "principal": "233210.55"},
            "closing_costs": "2750.40", "points_percent": "0.625"}
    compare_refinance_answer(rep, f"{name}: cash brought to closing (new principal below the balance)",
                             post(REFINANCE, refinance_body(case)), case)
    # No payments made yet: the current loan is its whole original ledger.
    case = {"current": {"principal": "99999.99", "annual_rate_percent": "8.125", "term_months": "180",
                        "payments_made": "0"},
            "new": {"annual_rate_percent": "7.125", "term_months": "180"}, "closing_costs": "1200"}
    compare_refinance_answer(rep, f"{name}: no payments made yet", get(REFINANCE, refinance_query(case)), case)


def check_refinance_same_loan(rep: Report, name: str, rng_state):
    # Property (common practice, no source): refinancing into the same rate over the same
    # remaining term at no cost changes nothing: the payment is the same, both break-evens are 0
    # months, and every horizon costs the same either way.
    rng = random.Random(rng_state)
    balance = random_principal(rng, 20_000, 900_000)
    rate = random_rate(rng, 2, 10)
    left = rng.randint(12, 360)
    case = {"current": {"balance": balance, "annual_rate_percent": rate, "remaining_payments": str(left)},
            "new": {"annual_rate_percent": rate, "term_months": str(left)},
            "closing_costs": "0", "points_percent": "0", "horizon_months": str(rng.randint(1, 480))}
    a = get(REFINANCE, refinance_query(case))
    j, _ = compare_refinance_answer(rep, f"{name}: {balance} at {rate} % over {left}: every figure", a, case)
    same = all(h["current_cost"] == h["new_cost"] and h["refinancing_saves"] in ("0.00", "0")
               for h in j["horizons"] + [j["to_the_end"]])
    got = (j["break_even_months"], j["break_even_months_with_balances"], cents(j["monthly_change"]), same)
    rep.check(f"{name}: {balance} at {rate} % over {left}: break-evens 0 and 0, no change, equal costs everywhere",
              got == (0, 0, 0, True), f"{got}", a.where)


def check_refinance_longer_term(rep: Report, name: str):
    # current: 150,000 at 7 % with 240 payments left; new: 30 years at 6.5 %.
    # Hand-worked (annuity formula, common practice, no source; numpy-financial agrees:
    # level_payment_float(0.07/12, 240, -150000) = 1162.9484…, level_payment_float(0.065/12, 360, -150000) = 948.1020…):
    # payments 1,162.95 and 948.10, 214.85 less a month. The 30-year loan repays far more
    # slowly, so what each way has cost (payments + balance still owed) tells another story:
    #
    # With 4,000 of costs: simple break-even ⌈4000 / 214.85⌉ = ⌈18.62⌉ = 19 months. After 19
    # payments keeping the loan has cost 22,096.05 paid + 144,231.96 owed = 166,328.01, the new
    # loan 4,000 + 18,013.90 + 147,294.05 = 169,307.95: still 2,979.94 behind. Before costs the
    # new way's lead (a lower rate, but interest on a slower-falling balance) peaks at 1,869.02
    # in month 56 and then shrinks (it is behind from month 120 on), so it never recovers 4,000:
    # the balance-aware break-even is null (never), later than any month.
    #
    # With 1,500 of costs: simple ⌈1500 / 214.85⌉ = ⌈6.98⌉ = 7 months, when the new way is
    # still 1,082.57 behind (1,500 + 6,636.70 + 149,035.24 = 157,171.94 against 8,140.65 +
    # 147,948.72 = 156,089.37). Balances counted it breaks even in month 32 (1,500 + 30,339.20
    # + 145,275.94 = 177,115.14 against 37,214.40 + 139,901.68 = 177,116.08) and costs more
    # again from month 80 (213,814.97 against 213,787.96).
    for costs, simple, with_balances, again in (("4000", 19, None, None), ("1500", 7, 32, 80)):
        case = {"current": {"balance": "150000", "annual_rate_percent": "7", "remaining_payments": "240"},
                "new": {"annual_rate_percent": "6.5", "term_months": "360"},
                "closing_costs": costs, "points_percent": "0"}
        label = f"{name} with {costs} of costs"
        a = get(REFINANCE, refinance_query(case))
        j, r = compare_refinance_answer(rep, f"{label}: every figure against the exact ledgers", a, case)
        got = (j["current_payment"], j["new_payment"], j["break_even_months"], j["break_even_months_with_balances"],
               j["costs_more_again_from_month"])
        rep.check(f"{label}: payments 1,162.95 and 948.10, break-evens {simple} and {with_balances}, "
                  f"costs more again from {again} (hand-worked)",
                  got == ("1162.95", "948.10", simple, with_balances, again), f"{got}", a.where)
        s, b = j["break_even_months"], j["break_even_months_with_balances"]
        rep.check(f"{label}: the simple break-even looks earlier than the balance-aware one (null: never)",
                  s is not None and (b is None or s < b), f"simple {s}, with balances {b}", a.where)
    # The reference's own figures behind the comment above.
    case["closing_costs"] = "4000"
    r4 = refinance_reference(case)
    lead = [r4["cur"].cost(m) - r4["new"].cost(m) + 400_000 for m in range(361)]
    rep.check(f"{name}: before costs the new way's lead peaks at 1,869.02 in month 56 (reference)",
              (max(lead), lead.index(max(lead))) == (186_902, 56), f"{show(max(lead))} in month {lead.index(max(lead))}")


def random_refinance_case(rng: random.Random) -> dict:
    rate = random_rate(rng, 3, 9)
    if rng.random() < 0.5:
        current = {"balance": random_principal(rng, 40_000, 800_000), "annual_rate_percent": rate,
                   "remaining_payments": str(rng.randint(24, 360))}
        balance_c = cents(current["balance"])
    else:
        term = rng.choice([120, 180, 240, 300, 360])
        current = {"principal": random_principal(rng, 60_000, 900_000), "annual_rate_percent": rate,
                   "term_months": str(term), "payments_made": str(rng.randint(0, term - 1))}
        balance_c = None
    case = {"current": current,
            "new": {"annual_rate_percent": random_rate(rng, 2.5, 8.5),
                    "term_months": str(rng.choice([120, 180, 240, 300, 360]))},
            "closing_costs": f"{rng.randint(0, 600_000) / 100:.2f}",
            "points_percent": str(Decimal(rng.randint(-8, 20)) / 8)}
    closing = cents(case["closing_costs"])
    style = rng.random()
    if style < 0.35:
        # Finance part of the costs: at most the closing costs (points are known only once the
        # new principal is, so the financed part stays within the closing costs alone).
        case["financed_costs"] = f"{rng.randint(0, closing) / 100:.2f}"
        if Fraction(case["points_percent"]) < 0:
            case["points_percent"] = "0"
    if 0.35 <= style < 0.6:
        case["cash_out"] = f"{rng.randint(0, 5_000_000) / 100:.2f}"
    if style >= 0.9 and balance_c is not None:
        # The new principal given outright: cash out (or cash brought in) follows from it.
        case["new"]["principal"] = f"{(balance_c + rng.randint(-1_000_000, 3_000_000)) / 100:.2f}"
    if rng.random() < 0.4:
        case["horizon_months"] = str(rng.randint(1, 480))
    return case


def check_refinance_random(rep: Report, name: str, k: int, rng_state):
    rng = random.Random(rng_state)
    case = random_refinance_case(rng)
    form = "original terms" if "principal" in case["current"] else "balance"
    if k % 2 == 0:
        a = get(REFINANCE, refinance_query(case))
    else:
        a = post(REFINANCE, refinance_body(case))
    j, _ = compare_refinance_answer(rep, f"{name} (current by {form})", a, case)
    if k < 6:
        b = post(REFINANCE, refinance_body(case)) if k % 2 == 0 else get(REFINANCE, refinance_query(case))
        rep.check(f"{name}: the {'POST' if k % 2 == 0 else 'GET'} twin answers the same",
                  b.status == 200 and b.json() == j, f"HTTP {b.status}", b.where)


def check_refinance_refusals(rep: Report, name: str):
    paid_off = {"principal": "200000", "annual_rate_percent": "6", "term_months": "360", "payments_made": "360"}
    new = {"annual_rate_percent": "6.125", "term_months": "360"}
    expect_refusal(rep, f"{name}: a current loan already paid off (GET) is refused naming current.payments_made",
                   get(REFINANCE, refinance_query({"current": paid_off, "new": new})), "current.payments_made")
    expect_refusal(rep, f"{name}: a current loan already paid off (POST) is refused naming /current/payments_made",
                   post(REFINANCE, refinance_body({"current": paid_off, "new": new})), "/current/payments_made")
    euro = {"balance": "187500", "annual_rate_percent": "7.25", "remaining_payments": "312", "currency": "EUR"}
    expect_refusal(rep, f"{name}: a current loan in EUR against a new one in USD (GET) is refused naming current.currency",
                   get(REFINANCE, refinance_query({"current": euro, "new": new})), "current.currency")
    expect_refusal(rep, f"{name}: a current loan in EUR against a new one in USD (POST) is refused naming /current/currency",
                   post(REFINANCE, refinance_body({"current": euro, "new": new})), "/current/currency")
    fine = {"balance": "187500", "annual_rate_percent": "7.25", "remaining_payments": "312"}
    # ISO 4217: the US dollar has 2 minor units, so 3,200.125 is not an amount of USD.
    expect_refusal(rep, f"{name}: closing_costs 3200.125 in USD (GET) is refused naming closing_costs",
                   get(REFINANCE, refinance_query({"current": fine, "new": new, "closing_costs": "3200.125"})),
                   "closing_costs")
    expect_refusal(rep, f"{name}: closing_costs 3200.125 in USD (POST) is refused naming /closing_costs",
                   post(REFINANCE, refinance_body({"current": fine, "new": new, "closing_costs": "3200.125"})),
                   "/closing_costs")


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
    rng = random.Random(SEED)

    run_case(rep, "grid 2 × 13 × 8", check_grid_main)
    run_case(rep, "grid 7 CFR 1942.19", check_grid_cfr)
    run_case(rep, "grid", check_grid_frequencies)
    run_case(rep, "grid refusals", check_grid_refusals)

    run_case(rep, "options hand-worked", check_options_hand_worked)
    for k in range(30):
        run_case(rep, f"options random set {k + 1}", check_options_random, k, rng.getrandbits(64))
    run_case(rep, "options refusals", check_options_refusals)

    run_case(rep, "refinance example", check_refinance_example)
    run_case(rep, "refinance fixed", check_refinance_fixed)
    for k in range(4):
        run_case(rep, f"refinance same loan {k + 1}", check_refinance_same_loan, rng.getrandbits(64))
    run_case(rep, "refinance longer term", check_refinance_longer_term)
    for k in range(30):
        run_case(rep, f"refinance random case {k + 1}", check_refinance_random, k, rng.getrandbits(64))
    run_case(rep, "refinance refusals", check_refinance_refusals)

    for o in rep.observations:
        print(f"note  {o}")
    print(f"      ({time.time() - t0:.1f} s)")
    print(f"choices: {rep.passed} passed, {rep.failed} failed")
    return 1 if rep.failed else 0


if __name__ == "__main__":
    sys.exit(main())
