#!/usr/bin/env python3
"""Cross-check adjustable-rate loans against an exact-fraction reference, numpy-financial and Regulation Z's examples.

The loan schedule operation with `adjustable` terms (GET and POST
/api/v1/loans/schedule, and GET /api/v1/loans/check for the disclosures) is asked
seeded-random and published questions, and its answers are compared with code
that shares nothing with Residue:

1. An exact posted ledger, stepped here with Python's `fractions.Fraction` and
   integers of cents, on 40 seeded-random adjustable loans (principals 50,000 to
   900,000, initial rates 2 to 9 %, terms of 120 to 360 months, first changes
   from payment 2 to the last, changes every 1, 6 or 12 payments, first and
   periodic caps or none, floors, the four roundings, payment caps, interest-only
   periods, and each of the four rate paths) and on 12 chosen loans at the edges
   of the rules (negative amortisation and recasts, halves of an eighth, caps of
   zero, a zero rate, a change at every payment, a change on the last payment,
   interest-only to the last payment but one), each path fetched with
   rate_path=…. Every row's payment, extra, interest, principal and balance is
   compared to the cent, and so are each answer's rate_paths steps and final
   payments and the check operation's final payment and total of payments (the
   composite path). The rules are the ones Residue states (the rate at each
   change: index + margin rounded by counting eighths, moved by at most that
   change's cap, then held within the floor and the maximum; the balance
   re-amortised over the remaining term at each change; a payment cap leaving
   unpaid interest on the balance, with a recast every 60 payments); the
   recurrence itself is common practice, no source.

2. The paths against each other: at every payment before the last the highest
   path's rate is at least the composite's, which is at least the lowest's, and
   without a payment cap so are their payments (the index-values path's between
   the highest and the lowest); every rate a change sets lies within the floor
   and the maximum (§1026.19(b)(2)(viii)(B), comment 37(c)(2)(i)-1, comment
   37(j)(4)-1, §1026.30).

3. numpy-financial 1.0.0: at every rate change (loans without a payment cap)
   the posted payment equals `level_payment(rate / 12, payments left, −balance)`
   (numpy-financial's level-payment function, imported once below as
   level_payment, called with decimal.Decimal arguments so it computes in
   50-digit decimals) rounded half up to the cent.

4. The four published examples of Regulation Z and its official commentary:
   Appendix H-14 (the $10,000 example of §1026.19(b)(2)(viii)(B)), comment
   17(c)(1)-10 (the composite APR without caps, GET /api/v1/loans/check),
   comment 43(c)(5)(i)-5.ii (the ability-to-repay payment) and comment
   43(e)(2)(iv)-7.iii (the qualified mortgage payment).

5. The three ways of writing the terms (compact `adjustable=KEY:VALUE,…`,
   prefixed `adjustable.NAME=…` query parameters, and a JSON body's
   `adjustable` object to POST /api/v1/loans/schedule) give the same answer.

Usage: python tests/crosscheck/adjustable.py --base-url http://127.0.0.1:18531
Prints one line per check (the bulk checks of a ledger as one line each, counted
one check per figure), naming the request and both values when they differ, and
ends with `adjustable: N passed, M failed`; exits 1 if any check failed.
"""

from __future__ import annotations

import argparse
import json
import math
import random
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from decimal import ROUND_HALF_UP, Decimal, getcontext
from fractions import Fraction

import numpy_financial as npf

# The reference library's function under this project's own word; the attribute
# name on the right is numpy-financial's published interface.
level_payment = npf.pmt

getcontext().prec = 50
SEED = 20261207
SCHEDULE = "/api/v1/loans/schedule"
CHECK = "/api/v1/loans/check"
PATHS = ["composite", "highest", "lowest", "index_values"]
RECAST_EVERY = 60  # payments between recasts of a payment-capped loan (Residue's stated rule)
# A rate change falling on the first payment after an interest-only period, on a payment-capped
# loan: the stated rules cap a payment "at a change (after any interest-only period)" from the
# payment before it, which there is the interest-only payment; Residue instead posts the full
# amortising payment (it treats the end of an interest-only period as a recast, as it does when
# no change falls there). The two readings differ only on that payment and what follows from it.
# False follows Residue (observed, not in the stated rules); True follows the cap literally.
CAP_AT_INTEREST_ONLY_END = False

# The compact query keys and the JSON names they stand for (the operation's documented syntax).
SHORT = {"index_percent": "index", "margin_percent": "margin", "first_change_payment": "first_change",
         "change_every": "every", "first_change_cap_percent": "first_cap", "periodic_cap_percent": "cap",
         "lifetime_max_percent": "max", "floor_percent": "floor", "rounding": "rounding",
         "payment_cap_percent": "payment_cap"}

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
# The exact reference: amounts are integers of cents, rates Fractions of a percent
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


def dollars(text) -> int:
    """A money string rounded half up to the whole dollar (how the commentary prints its figures)."""
    return int(Decimal(str(text)).quantize(Decimal(1), rounding=ROUND_HALF_UP))


def pct(f: Fraction) -> str:
    """A Fraction of a percent as the plain decimal text a request carries (terminating only)."""
    d = Decimal(f.numerator) / Decimal(f.denominator)
    if d * f.denominator != f.numerator:
        raise ValueError(f"{f} has no finite decimal")
    return format(d.normalize(), "f")


def round_index(x: Fraction, rounding: str) -> Fraction:
    """index + margin rounded as the note says, by counting eighths: x·8 rounded half up, up or
    down, then / 8 (Residue's stated rule; the usual note's nearest 1/8 point, REGULATIONS.md)."""
    if rounding == "none":
        return x
    y = x * 8
    if rounding == "nearest_eighth":
        e = half_up(y)
    elif rounding == "up_eighth":
        e = math.ceil(y)
    elif rounding == "down_eighth":
        e = math.floor(y)
    else:
        raise ValueError(rounding)
    return Fraction(e, 8)


class Terms:
    """One adjustable-rate loan as the reference reads it (rates in percent, Fractions)."""

    def __init__(self, case: dict):
        a = case["adjustable"]
        f = lambda k: None if a.get(k) is None else Fraction(a[k])  # noqa: E731
        self.principal = cents(case["principal"])
        self.initial = Fraction(case["annual_rate_percent"])
        self.n = int(case["term_months"])
        self.io = int(case.get("interest_only_payments", 0))
        self.index, self.margin = f("index_percent"), f("margin_percent")
        self.first, self.every = int(a["first_change_payment"]), int(a["change_every"])
        self.cap = f("periodic_cap_percent")
        # The first change's cap defaults to the periodic cap (None: no limit).
        self.first_cap = f("first_change_cap_percent") if a.get("first_change_cap_percent") is not None else self.cap
        self.max = f("lifetime_max_percent")
        # The floor defaults to the margin (comment 37(j)(4)-1).
        self.floor = f("floor_percent") if a.get("floor_percent") is not None else self.margin
        self.rounding = a.get("rounding", "none")
        self.payment_cap = f("payment_cap_percent")
        self.index_values = [Fraction(v) for v in case.get("index_values", [])]

    def changes(self) -> list[int]:
        return list(range(self.first, self.n + 1, self.every))

    def rate_changes(self, path: str) -> dict[int, Fraction]:
        """Payment number → the new rate, for each change that moves the rate (one that leaves it
        as it was does nothing)."""
        out, rate = {}, self.initial
        for j, k in enumerate(self.changes()):
            cap = self.first_cap if j == 0 else self.cap
            if path == "composite":
                target = round_index(self.index + self.margin, self.rounding)
            elif path == "highest":
                target = self.max
            elif path == "lowest":
                target = self.floor
            elif path == "index_values":
                v = self.index_values[min(j, len(self.index_values) - 1)]
                target = round_index(v + self.margin, self.rounding)
            else:
                raise ValueError(path)
            new = target
            if cap is not None:
                new = min(max(new, rate - cap), rate + cap)
            new = min(max(new, self.floor), self.max)
            if new != rate:
                out[k] = new
                rate = new
        return out


def full_payment(balance_c: int, rate: Fraction, m: int) -> int:
    """B·i / (1 − (1 + i)^−m) with i = rate / 1200, half up to the cent (the annuity formula,
    common practice, no source; B / m at a zero rate)."""
    i = rate / 1200
    if i == 0:
        return half_up(Fraction(balance_c, m))
    return half_up(balance_c * i / (1 - (1 + i) ** -m))


def floor_to_cent_of(payment_c: int, cap_percent: Fraction) -> int:
    """The most a capped payment may become: payment × (1 + cap / 100), down to the cent."""
    return math.floor(payment_c * (1 + cap_percent / 100))


def ledger(t: Terms, path: str) -> list[dict]:
    """The posted ledger on one path: rows of (number, rate, payment, interest, principal, balance)
    in cents.

    Each payment's interest is balance × rate / 1200 half up to the cent; while interest-only the
    payment is that interest; payment 1 (or the first after an interest-only period) is the level
    payment over the payments left; at a change that moves the rate the payment is re-amortised
    over the payments left (n − k + 1) from the balance before payment k; with a payment cap a
    re-amortised payment rises at most by the cap (floored to the cent), interest it leaves unpaid
    is added to the balance, and at payments 61, 121, … the payment is recast to the full one,
    cap ignored; the n-th payment pays the balance and its interest (Residue's stated rules)."""
    changes = t.rate_changes(path)
    rate, b, pay, rows = t.initial, t.principal, None, []
    for k in range(1, t.n + 1):
        changed = k in changes
        if changed:
            rate = changes[k]
        interest = half_up(b * rate / 1200)
        m = t.n - k + 1
        if k <= t.io:
            pay = interest
        elif k == t.io + 1 and not (CAP_AT_INTEREST_ONLY_END and changed and t.io > 0 and t.payment_cap is not None):
            # The first amortising payment (payment 1 of a loan without an interest-only period):
            # the level payment over the payments left, not capped (see CAP_AT_INTEREST_ONLY_END).
            pay = full_payment(b, rate, m)
        else:
            recast = t.payment_cap is not None and (k - 1) % RECAST_EVERY == 0
            if recast:
                pay = full_payment(b, rate, m)
            elif changed:
                full = full_payment(b, rate, m)
                pay = full if t.payment_cap is None else min(full, floor_to_cent_of(pay, t.payment_cap))
        if k == t.n:
            payment = b + interest
        else:
            payment = pay
        principal = payment - interest
        b -= principal
        rows.append({"number": k, "rate": rate, "payment": payment, "interest": interest,
                     "principal": principal, "balance": b})
    return rows


def steps_of(rows: list[dict]) -> list[tuple]:
    """The runs of equal rate and payment before the final payment, as (from_payment, rate, payment):
    what an answer's rate_paths[].steps lists."""
    out = []
    for r in rows[:-1]:
        if not out or (out[-1][1], out[-1][2]) != (r["rate"], r["payment"]):
            out.append((r["number"], r["rate"], r["payment"]))
    return out


# --------------------------------------------------------------------------
# Requests in the three syntaxes
# --------------------------------------------------------------------------


def compact(adj: dict) -> str:
    return ",".join(f"{SHORT[k]}:{v}" for k, v in adj.items() if v is not None)


def query(case: dict, path: str | None = None, style: str = "compact",
          with_index_values: bool = True) -> list[tuple[str, str]]:
    pairs = [(k, str(case[k])) for k in ("principal", "annual_rate_percent", "term_months", "interest_only_payments")
             if k in case]
    if style == "compact":
        pairs.append(("adjustable", compact(case["adjustable"])))
    else:
        pairs += [(f"adjustable.{k}", str(v)) for k, v in case["adjustable"].items() if v is not None]
    if path is not None:
        pairs.append(("rate_path", path))
    # index_values belongs to the index-values path alone (the service refuses it with another path).
    if with_index_values and case.get("index_values") and path in (None, "index_values"):
        pairs.append(("index_values", ",".join(case["index_values"])))
    return pairs


def body(case: dict, path: str | None = None) -> dict:
    out = {k: case[k] for k in ("principal", "annual_rate_percent") if k in case}
    out["term_months"] = int(case["term_months"])
    if "interest_only_payments" in case:
        out["interest_only_payments"] = int(case["interest_only_payments"])
    adj = {}
    for k, v in case["adjustable"].items():
        if v is None:
            continue
        adj[k] = int(v) if k in ("first_change_payment", "change_every") else v
    out["adjustable"] = adj
    if path is not None:
        out["rate_path"] = path
    if case.get("index_values") and path in (None, "index_values"):
        out["index_values"] = list(case["index_values"])
    return out


# --------------------------------------------------------------------------
# Random adjustable loans
# --------------------------------------------------------------------------


def dec(rng: random.Random, lo: float, hi: float, places: int) -> Fraction:
    s = 10**places
    return Fraction(rng.randint(round(lo * s), round(hi * s)), s)


def random_case(rng: random.Random, path: str) -> dict:
    c = rng.randint(5_000_000, 90_000_000)
    principal = str(c // 100) if rng.random() < 0.5 else f"{c // 100}.{c % 100:02d}"
    initial = dec(rng, 2, 9, rng.choice([0, 1, 2, 3])) if rng.random() < 0.5 else Fraction(rng.randint(16, 72), 8)
    n = rng.choice([120, 180, 240, 300, 360]) if rng.random() < 0.6 else rng.randint(120, 360)
    every = rng.choice([1, 6, 12])
    first = rng.choice([rng.randint(2, n)] * 3 + [min(n, rng.choice([13, 25, 37, 61, 85, 121]))] * 4 + [n, 2])
    margin = Fraction(rng.randint(10, 32), 8) if rng.random() < 0.6 else dec(rng, 1.25, 4, 2)
    index = dec(rng, 0.25, 7, rng.choice([2, 3]))
    floor = None
    if rng.random() < 0.5:
        floor = dec(rng, 1, min(float(initial), 5), 2) if rng.random() < 0.8 else initial + dec(rng, 0, 1, 2)
    low = max(initial, floor if floor is not None else margin)
    top = low + (dec(rng, 1, 8, rng.choice([0, 2])) if rng.random() < 0.9 else 0)
    cap = rng.choice([None, Fraction(1), Fraction(2), Fraction(1, 2), Fraction(5, 4), Fraction(0)]
                     if rng.random() < 0.1 else [None, Fraction(1), Fraction(2), Fraction(1, 2), Fraction(5, 4)])
    first_cap = rng.choice([None, Fraction(2), Fraction(5), Fraction(3, 2)])
    adj = {"index_percent": pct(index), "margin_percent": pct(margin), "first_change_payment": str(first),
           "change_every": str(every),
           "first_change_cap_percent": None if first_cap is None else pct(first_cap),
           "periodic_cap_percent": None if cap is None else pct(cap),
           "lifetime_max_percent": pct(top), "floor_percent": None if floor is None else pct(floor),
           "rounding": rng.choice(["none", "nearest_eighth", "up_eighth", "down_eighth"]),
           "payment_cap_percent": rng.choice(["7.5", "5", "3.25", "12"]) if rng.random() < 0.3 else None}
    case = {"principal": principal, "annual_rate_percent": pct(initial), "term_months": str(n), "adjustable": adj,
            "path": path}
    if rng.random() < 0.25:
        case["interest_only_payments"] = str(rng.randint(1, min(120, n - 1)))
    if path == "index_values":
        case["index_values"] = [pct(dec(rng, 0.5, 9, rng.choice([1, 2, 3]))) for _ in range(rng.randint(1, 6))]
    return case


def describe(case: dict) -> str:
    io = f", {case['interest_only_payments']} interest-only" if "interest_only_payments" in case else ""
    iv = f", index values {','.join(case['index_values'])}" if case.get("index_values") else ""
    return (f"{case['principal']} at {case['annual_rate_percent']} % × {case['term_months']}{io}, "
            f"adjustable={compact(case['adjustable'])}{iv}")


# --------------------------------------------------------------------------
# 1–3. Random loans: the exact ledger, the paths, numpy-financial
# --------------------------------------------------------------------------


def compare_rows(name: str, rows: list[dict], want: list[dict]) -> tuple[list[str], int]:
    failures, count = [], 1
    if [r.get("number") for r in rows] != [w["number"] for w in want]:
        failures.append(f"{name}: rows numbered {rows[0].get('number') if rows else None}.."
                        f"{rows[-1].get('number') if rows else None} ({len(rows)} rows), want 1..{len(want)}")
        return failures, count
    for r, w in zip(rows, want):
        for key in ("payment", "interest", "principal", "balance"):
            count += 1
            if cents(r[key]) != w[key]:
                failures.append(f"{name} payment {w['number']} {key}: API {r[key]}, reference {show(w[key])}")
        count += 1
        if cents(r["extra"]) != 0:
            failures.append(f"{name} payment {w['number']} extra: API {r['extra']}, reference 0.00")
    return failures, count


def check_random(rep: Report, name: str, rng_state):
    check_case(rep, name, random_case(random.Random(rng_state[1]), rng_state[0]))


def check_case(rep: Report, name: str, case: dict, exercise=None):
    """Checks 1–3 on one loan: every path's ledger, the paths' order and bounds, numpy-financial.
    `exercise` = (path, predicate on that path's API rows, what it shows): a chosen case's proof
    that it reaches the edge it was chosen for."""
    t = Terms(case)
    label = f"{name} ({case['path']}: {describe(case)})"
    paths = ["composite", "highest", "lowest"] + (["index_values"] if case.get("index_values") else [])
    answers, refs = {}, {}
    for p in paths:
        a = get(SCHEDULE, query(case, p))
        answers[p] = (a, ok_json(a))
        refs[p] = ledger(t, p)

    if exercise is not None:
        p, pred, what = exercise
        a, j = answers[p]
        reached = pred(j["schedule"])
        rep.check(f"{name}: the case reaches its edge", reached, f"{what}: {'yes' if reached else 'no'}", a.where)

    # 1. Every row of every path's posted ledger against the exact-fraction recurrence, to the cent.
    # (Source: the recurrence itself; Residue's stated rules, in ledger() above.)
    for p in paths:
        a, j = answers[p]
        failures, count = compare_rows(p, j["schedule"], refs[p])
        tag = " (the case's own path)" if p == case["path"] else ""
        rep.bulk(f"{label}: {p}{tag}: every row = the exact Fraction ledger", failures, count, a.where)

    # The answer's rate_paths (composite, highest, lowest) describe the same ledgers: each path's runs
    # of rate and payment and its final payment. (Source: the same recurrence.)
    a, j = answers[case["path"]]
    d_fail, d_count = [], 0
    by_path = {rp["path"]: rp for rp in j["rate_paths"]}
    for p in ("composite", "highest", "lowest"):
        d_count += 2
        rp = by_path.get(p)
        if rp is None:
            d_fail.append(f"rate_paths has no {p!r}")
            continue
        got = [(s["from_payment"], Fraction(s["rate_percent"]), cents(s["payment"])) for s in rp["steps"]]
        want = steps_of(refs[p])
        if got != want:
            d_fail.append(f"{p} steps: API {[(k, pct(r), show(c)) for k, r, c in got]}, "
                          f"reference {[(k, pct(r), show(c)) for k, r, c in want]}")
        if cents(rp["final_payment"]) != refs[p][-1]["payment"]:
            d_fail.append(f"{p} final_payment: API {rp['final_payment']}, reference {show(refs[p][-1]['payment'])}")
    rep.bulk(f"{label}: rate_paths steps and final payments = the exact ledgers' runs", d_fail, d_count, a.where)

    # The check operation figures its disclosures on the composite path (comment 17(c)(1)-10: the
    # composite is the basis of the finance charge and total of payments): its final payment and its
    # total of payments (§1026.18(h): the sum of the scheduled payments) are the composite ledger's.
    # (Source: the same recurrence; the check and the schedule are one request's two answers.)
    a = get(CHECK, query(case, None, "compact", with_index_values=False))
    j = ok_json(a)
    comp = refs["composite"]
    want = (show(comp[-1]["payment"]), show(sum(r["payment"] for r in comp)))
    got = (j["final_payment"], j["total_of_payments"])
    rep.check(f"{name}: loans/check's final_payment and total_of_payments = the composite ledger's",
              got == want, f"API {got}, reference {want}", a.where)

    # 2. The paths in order at every payment but the last, each path read from its own schedule
    # (rate_path=…). The maximum-increase path is the highest (§1026.19(b)(2)(viii)(B), comment
    # 37(c)(2)(i)-1), the minimum path the lowest, so at every payment the highest path's rate is at
    # least the composite's, which is at least the lowest's (rates from each path's rate_paths steps).
    # Without a payment cap a higher rate on a balance at least as high re-amortises to a payment at
    # least as high, so the payments are in the same order (and the index-values path lies between
    # the highest and the lowest). With a payment cap they need not be: a path that reaches the
    # maximum at once keeps its capped payment until the next recast (a change that leaves the rate
    # as it was does nothing), while a lower path that changes again re-caps from its own payment and
    # may pass it; only the rates are compared then. The n-th payment is left out: it pays off
    # whatever rounding has left and may order itself either way by cents (as the answers' own
    # notes say of the highest and lowest payments).
    def rates_by_payment(steps):
        out, s = [], 0
        for k in range(1, t.n):
            while s + 1 < len(steps) and steps[s + 1]["from_payment"] <= k:
                s += 1
            out.append(Fraction(steps[s]["rate_percent"]))
        return out

    rp = {r["path"]: r["steps"] for r in answers["composite"][1]["rate_paths"]}
    rate = {p: rates_by_payment(rp[p]) for p in ("composite", "highest", "lowest")}
    pay = {p: [cents(r["payment"]) for r in answers[p][1]["schedule"]] for p in paths}
    o_fail, o_count = [], 0
    for k in range(t.n - 1):
        o_count += 1
        h, c, lo = rate["highest"][k], rate["composite"][k], rate["lowest"][k]
        if not h >= c >= lo:
            o_fail.append(f"payment {k + 1} rates: highest {pct(h)}, composite {pct(c)}, lowest {pct(lo)}")
        if t.payment_cap is not None:
            continue
        o_count += 1
        h, c, lo = pay["highest"][k], pay["composite"][k], pay["lowest"][k]
        if not h >= c >= lo:
            o_fail.append(f"payment {k + 1}: highest {show(h)}, composite {show(c)}, lowest {show(lo)}")
        if "index_values" in pay:
            o_count += 1
            v = pay["index_values"][k]
            if not h >= v >= lo:
                o_fail.append(f"payment {k + 1}: highest {show(h)}, index values {show(v)}, lowest {show(lo)}")
    what = "rates" if t.payment_cap is not None else "rates and payments"
    rep.bulk(f"{name}: highest ≥ composite (and index values) ≥ lowest, {what}, at each payment 1..{t.n - 1}",
             o_fail, o_count, answers["composite"][0].where)

    # Every rate a change sets (steps from the first change on) lies within floor..max (the note's
    # lifetime maximum, §1026.30; the floor, the margin when none is stated, comment 37(j)(4)-1).
    # The initial rate is the contract's own and may sit below the floor until the first change.
    r_fail, r_count = [], 0
    for p in paths:
        for rp in answers[p][1]["rate_paths"]:
            for s in rp["steps"]:
                if s["from_payment"] >= t.first:
                    r_count += 1
                    if not t.floor <= Fraction(s["rate_percent"]) <= t.max:
                        r_fail.append(f"{rp['path']} (asked with rate_path={p}) from payment {s['from_payment']}: "
                                      f"{s['rate_percent']} % outside {pct(t.floor)}..{pct(t.max)}")
    if r_count:
        rep.bulk(f"{name}: every rate from the first change on lies within floor {pct(t.floor)} .. max {pct(t.max)}",
                 r_fail, r_count, answers["composite"][0].where)

    # 3. numpy-financial at each rate change (loans without a payment cap, changes after any
    # interest-only period and before the last payment): the posted payment equals
    # level_payment(rate / 12, payments left, balance before) rounded half up to the cent.
    if t.payment_cap is None:
        n_fail, n_count = [], 0
        for p in paths:
            rows = answers[p][1]["schedule"]
            for k, rate in t.rate_changes(p).items():
                if k <= t.io or k >= t.n:
                    continue
                before = Decimal(rows[k - 2]["balance"]) if k > 1 else Decimal(case["principal"])
                want = -level_payment(Decimal(pct(rate)) / Decimal(1200), t.n - k + 1, before)
                want_c = int((want * 100).quantize(Decimal(1), rounding=ROUND_HALF_UP))
                n_count += 1
                if cents(rows[k - 1]["payment"]) != want_c:
                    n_fail.append(f"{p} payment {k} at {pct(rate)} % over {t.n - k + 1} from {before}: "
                                  f"API {rows[k - 1]['payment']}, numpy-financial {want}")
        if n_count:
            rep.bulk(f"{name}: the payment at each rate change = numpy-financial's level payment, half up",
                     n_fail, n_count, answers["composite"][0].where)


def adj(**kw) -> dict:
    """Adjustable terms by their JSON names, in the documented order."""
    return {k: kw[k] for k in SHORT if k in kw}


def loan(principal, rate, n, path, terms, io=None, index_values=None) -> dict:
    case = {"principal": principal, "annual_rate_percent": rate, "term_months": str(n), "path": path,
            "adjustable": terms}
    if io is not None:
        case["interest_only_payments"] = str(io)
    if index_values is not None:
        case["index_values"] = index_values
    return case


def negative_amortisation(rows) -> bool:
    return any(cents(r["principal"]) < 0 for r in rows)


def payment_at(k: int, text: str):
    return lambda rows: rows[k - 1]["payment"] == text


# Chosen loans at the edges of the stated rules, each checked like a random one (checks 1–3) and
# each shown to reach its edge. Rates and payments in the exercises are worked by hand from the
# rules (common practice, no source) and agree with the exact ledger.
EDGE_CASES = [
    # A 7.5 % payment cap against rates rising 3 → 8 → 10 → 12: capped payments leave interest
    # unpaid (negative amortisation) until the recasts at payments 61, 121, ….
    ("payment cap, negative amortisation, recasts",
     loan("300000", "3", 360, "highest", adj(index_percent="6", margin_percent="3", first_change_payment="13",
                                              change_every="12", first_change_cap_percent="5",
                                              periodic_cap_percent="2", lifetime_max_percent="12",
                                              payment_cap_percent="7.5")),
     ("highest", negative_amortisation, "the highest path's capped payments leave interest unpaid")),
    # A payment cap on a composite rate that never moves (index 1 + margin 2 = the initial 3 %):
    # the recasts at payments 61, 121, … still recompute the full payment from the posted balance,
    # which moves it by a cent at 181, 241 and 301 (1,264.81 → 1,264.82 → 1,264.81 → 1,264.82), and
    # the final payment is 1,264.63.
    ("payment cap on a rate that never moves",
     loan("300000", "3", 360, "composite", adj(index_percent="1", margin_percent="2", first_change_payment="13",
                                                change_every="12", periodic_cap_percent="2",
                                                lifetime_max_percent="12", payment_cap_percent="7.5")),
     ("composite", lambda rows: [rows[k - 1]["payment"] for k in (180, 181, 241, 301, 360)]
      == ["1264.81", "1264.82", "1264.81", "1264.82", "1264.63"],
      "payments 180, 181, 241, 301 and 360 are 1,264.81, 1,264.82, 1,264.81, 1,264.82 and 1,264.63")),
    # Interest-only for 24 payments with changes during it (13: 3 → 5 %) and one on payment 25,
    # where the interest-only period ends (index 5.6 + 2.75 = 8.35 → 8.375, capped at 6 %).
    # Payment 25 is the full payment over 336 at 6 % on 200,000, 1,230.25, which Residue posts;
    # capped from the interest-only 833.33 it would be ⌊833.33 × 1.075⌋ = 895.82
    # (CAP_AT_INTEREST_ONLY_END).
    ("payment cap across the end of an interest-only period",
     loan("200000", "3", 360, "index_values",
          adj(index_percent="4.5", margin_percent="2.75", first_change_payment="13", change_every="12",
              first_change_cap_percent="2", periodic_cap_percent="1", lifetime_max_percent="11",
              floor_percent="3", rounding="nearest_eighth", payment_cap_percent="7.5"),
          io=24, index_values=["4.8", "5.6", "7.9"]),
     ("index_values", payment_at(25, "1230.25" if not CAP_AT_INTEREST_ONLY_END else "895.82"),
      "payment 25 (the first after interest-only, at a change to 6 %) is "
      + ("the full 1,230.25, not the capped 895.82" if not CAP_AT_INTEREST_ONLY_END else "the capped 895.82"))),
    # Halves of an eighth: 4.0625 + 2.75 = 6.8125 = 54.5 eighths → 55 → 6.875 (halves up).
    ("nearest eighth at a half",
     loan("350000", "5.5", 360, "composite", adj(index_percent="4.0625", margin_percent="2.75",
                                                 first_change_payment="61", change_every="12",
                                                 periodic_cap_percent="2", lifetime_max_percent="10.5",
                                                 rounding="nearest_eighth")),
     ("composite", lambda rows: cents(rows[60]["interest"]) == half_up(cents(rows[59]["balance"]) * Fraction("6.875") / 1200),
      "payment 61's interest is at 6.875 %")),
    # Index values on halves and below zero: 4.0625 → 6.875, 3.9375 + 2.75 = 6.6875 → 6.75,
    # −0.5 + 2.75 = 2.25 → held at the floor of 2.5.
    ("index values at halves and below zero",
     loan("180000", "6", 240, "index_values", adj(index_percent="4", margin_percent="2.75",
                                                  first_change_payment="25", change_every="6",
                                                  first_change_cap_percent="1", periodic_cap_percent="5",
                                                  lifetime_max_percent="12", floor_percent="2.5",
                                                  rounding="nearest_eighth"),
          index_values=["4.0625", "3.9375", "-0.5"]),
     ("index_values", lambda rows: cents(rows[36]["interest"]) == half_up(cents(rows[35]["balance"]) * Fraction("2.5") / 1200),
      "payment 37's interest is at the 2.5 % floor")),
    # Up to an eighth already exact stays (4.125 + 2.75 = 6.875); down from 6.876 is 6.875 too.
    ("up to an exact eighth",
     loan("420000", "5", 300, "composite", adj(index_percent="4.125", margin_percent="2.75",
                                                first_change_payment="37", change_every="12",
                                                lifetime_max_percent="11", rounding="up_eighth")),
     None),
    ("down from just above an eighth",
     loan("420000", "5", 300, "composite", adj(index_percent="4.126", margin_percent="2.75",
                                                first_change_payment="37", change_every="12",
                                                lifetime_max_percent="11", rounding="down_eighth")),
     None),
    # Caps of 0 hold the rate, but the floor (4 %) lifts the 3 % initial rate at the first change.
    ("caps of zero below the floor",
     loan("250000", "3", 360, "composite", adj(index_percent="5", margin_percent="2", first_change_payment="25",
                                                change_every="12", first_change_cap_percent="0",
                                                periodic_cap_percent="0", lifetime_max_percent="9",
                                                floor_percent="4")),
     ("composite", lambda rows: cents(rows[24]["interest"]) == half_up(cents(rows[23]["balance"]) * 4 / 1200),
      "payment 25's interest is at the 4 % floor")),
    # A margin of 0 and so a floor of 0: the lowest path steps 2 → 1 → 0 %, where the payment is
    # the balance over the payments left.
    ("down to a zero rate",
     loan("150000", "2", 180, "lowest", adj(index_percent="1.5", margin_percent="0", first_change_payment="13",
                                             change_every="12", periodic_cap_percent="1", lifetime_max_percent="8")),
     ("lowest", lambda rows: all(cents(r["interest"]) == 0 for r in rows[24:]),
      "no interest from payment 25 on")),
    # A change at every payment from payment 2, an eighth at a time, to the maximum.
    ("a change at every payment",
     loan("640000", "4", 240, "highest", adj(index_percent="3", margin_percent="2.5", first_change_payment="2",
                                              change_every="1", periodic_cap_percent="0.125",
                                              lifetime_max_percent="9")),
     ("highest", lambda rows: len({r["payment"] for r in rows[:41]}) == 41,
      "payments 1..41 are 41 different payments")),
    # The first change on the last payment: only the final payment's interest moves.
    ("first change on the last payment",
     loan("95000", "7.25", 120, "highest", adj(index_percent="5", margin_percent="2.25", first_change_payment="120",
                                               change_every="12", periodic_cap_percent="2",
                                               lifetime_max_percent="12")),
     ("highest", lambda rows: len({r["payment"] for r in rows[:119]}) == 1, "payments 1..119 are level")),
    # Interest-only to the payment before the last, with a change during it and a payment cap:
    # the last payment repays everything.
    ("interest-only to the last payment but one",
     loan("500000", "4", 120, "highest", adj(index_percent="4", margin_percent="2", first_change_payment="61",
                                              change_every="12", periodic_cap_percent="1",
                                              lifetime_max_percent="8", payment_cap_percent="7.5"), io=119),
     ("highest", lambda rows: cents(rows[-1]["principal"]) == 50_000_000, "the last payment repays 500,000")),
]


# --------------------------------------------------------------------------
# 4. The published examples
# --------------------------------------------------------------------------


def check_h14(rep: Report, name: str):
    # 12 CFR 1026 Appendix H-14 (the §1026.19(b)(2)(viii)(B) historical example of a $10,000 loan):
    # 12.41 % initially, rate changes yearly by at most 2 points, at most 5 points over the life
    # (17.41 %), 30 years. "The payment is $106.03 in year 1; the rate reaches 17.41 % in year 4,
    # with a payment of $145.34." Index 10.41 + margin 2 is our choice (the example uses the
    # maximum-increase path, which the index does not enter).
    case = {"principal": "10000", "annual_rate_percent": "12.41", "term_months": "360",
            "adjustable": {"index_percent": "10.41", "margin_percent": "2", "first_change_payment": "13",
                           "change_every": "12", "periodic_cap_percent": "2", "lifetime_max_percent": "17.41"}}
    a = get(SCHEDULE, query(case))
    j = ok_json(a)
    pe = j["program_example"]
    got = (pe["initial_payment"], Fraction(pe["highest_rate_percent"]), pe["highest_payment"], pe["highest_payment_year"])
    rep.check(f"{name}: program_example = 106.03, 17.41 %, 145.34 in year 4 (Appendix H-14)",
              got == ("106.03", Fraction("17.41"), "145.34", 4), f"{got}", a.where)


def check_17c1_10(rep: Report, name: str):
    # Comment 17(c)(1)-10 (12 CFR 1026, Supplement I): $100,000 over 30 years, 9 % for the first
    # year, then the index at consummation (10 %) plus a 2-point margin, 12 %; no caps (a lifetime
    # maximum is required by the service (§1026.30): 15 % does not bind); no prepaid finance charge.
    # "12 payments of $804.62 and 348 payments of $1,025.31 … finance charge $266,463.32 …
    # APR 11.63 %."
    case = {"principal": "100000", "annual_rate_percent": "9", "term_months": "360",
            "adjustable": {"index_percent": "10", "margin_percent": "2", "first_change_payment": "13",
                           "change_every": "12", "lifetime_max_percent": "15"}}
    a = get(CHECK, query(case))
    j = ok_json(a)
    rep.check(f"{name}: apr_percent 11.63 (comment 17(c)(1)-10)", j["apr_percent"] == "11.63",
              f"{j['apr_percent']}", a.where)
    rep.check(f"{name}: computed_payment 804.62 (comment 17(c)(1)-10)", j["computed_payment"] == "804.62",
              f"{j['computed_payment']}", a.where)
    s = get(SCHEDULE, query(case))
    rows = ok_json(s)["schedule"]
    first12 = sorted({r["payment"] for r in rows[:12]})
    rep.check(f"{name}: payments 1..12 are 804.62 (comment 17(c)(1)-10)", first12 == ["804.62"], f"{first12}", s.where)
    middle = sorted({r["payment"] for r in rows[12:359]})
    rep.check(f"{name}: payments 13..359 are 1,025.31 (comment 17(c)(1)-10)", middle == ["1025.31"],
              f"{middle}", s.where)
    # The commentary counts 348 level payments of 1,025.31, the last one included, so its finance
    # charge (12 × 804.62 + 348 × 1,025.31 − 100,000 = 266,463.32) is the unrounded schedule's. A
    # posted ledger's last payment pays off the actual balance (the schedule's final row), which
    # differs from 1,025.31 by the rounding the payments and interest accumulated (here about
    # 11.53 less); the finance charge then differs by the same amount. Within 100 of the published
    # figure, and exactly 266,463.32 less 1,025.31 plus the posted final payment.
    fc = Decimal(j["finance_charge"])
    rep.check(f"{name}: finance_charge within 100 of 266,463.32 (comment 17(c)(1)-10, last payment level there)",
              abs(fc - Decimal("266463.32")) <= 100, f"{j['finance_charge']}", a.where)
    last = Decimal(rows[-1]["payment"])
    rep.check(f"{name}: finance_charge = 266,463.32 − 1,025.31 + the posted final payment ({rows[-1]['payment']})",
              fc == Decimal("266463.32") - Decimal("1025.31") + last, f"{j['finance_charge']}", a.where)


def check_43c5i(rep: Report, name: str):
    # Comment 43(c)(5)(i)-5.ii: $200,000 over 30 years, 6 % fixed for 5 years, then index + margin;
    # the fully indexed rate 7.5 % (index 5 + margin 2.5 here). "The scheduled payment is $1,199 and
    # the ability-to-repay payment $1,398" (whole dollars as the commentary prints them). Yearly
    # changes, 2-point caps and an 11 % maximum are our choice: the rule ignores periodic caps.
    case = {"principal": "200000", "annual_rate_percent": "6", "term_months": "360",
            "adjustable": {"index_percent": "5", "margin_percent": "2.5", "first_change_payment": "61",
                           "change_every": "12", "periodic_cap_percent": "2", "lifetime_max_percent": "11"}}
    a = get(SCHEDULE, query(case))
    j = ok_json(a)
    u = j["underwriting"]
    rep.check(f"{name}: underwriting.ability_to_repay_payment rounds to 1,398 (comment 43(c)(5)(i)-5.ii)",
              dollars(u["ability_to_repay_payment"]) == 1398, f"{u['ability_to_repay_payment']}", a.where)
    rep.check(f"{name}: the scheduled payment rounds to 1,199 (comment 43(c)(5)(i)-5.ii)",
              dollars(j["schedule"][0]["payment"]) == 1199 and dollars(j["summary"]["payment"]) == 1199,
              f"schedule {j['schedule'][0]['payment']}, summary {j['summary']['payment']}", a.where)


def check_43e2iv(rep: Report, name: str):
    # Comment 43(e)(2)(iv)-7.iii: $200,000 over 30 years, 6 % for 60 months, then at most 8 % (the
    # maximum rate in the first five years after the first payment: caps of 2 points; index 6 +
    # margin 2 here). "The balance after payment 60 is $186,109; the payment is $1,436 over the
    # 300 months left, or $1,468 over 360" (whole dollars).
    case = {"principal": "200000", "annual_rate_percent": "6", "term_months": "360",
            "adjustable": {"index_percent": "6", "margin_percent": "2", "first_change_payment": "61",
                           "change_every": "12", "periodic_cap_percent": "2", "lifetime_max_percent": "8"}}
    a = get(SCHEDULE, query(case))
    u = ok_json(a)["underwriting"]
    for key, want in (("balance_after_five_years", 186109), ("recast_payment_after_five_years", 1436),
                      ("qualified_mortgage_payment", 1468)):
        rep.check(f"{name}: underwriting.{key} rounds to {want:,} (comment 43(e)(2)(iv)-7.iii)",
                  dollars(u[key]) == want, f"{u[key]}", a.where)


# --------------------------------------------------------------------------
# 5. The three syntaxes
# --------------------------------------------------------------------------


def check_syntaxes(rep: Report, name: str, case: dict):
    # The operation's documented request syntax: compact KEY:VALUE pairs, adjustable.NAME
    # parameters and a JSON body's adjustable object are one set of terms; the answers must be
    # the same bytes' JSON.
    p = case.get("path")
    a1 = get(SCHEDULE, query(case, p, "compact"))
    a2 = get(SCHEDULE, query(case, p, "prefixed"))
    a3 = post(SCHEDULE, body(case, p))
    j1, j2, j3 = ok_json(a1), ok_json(a2), ok_json(a3)
    rep.check(f"{name}: adjustable.NAME parameters answer as the compact adjustable=… ({describe(case)})",
              j1 == j2, "same answer" if j1 == j2 else f"differ in {[k for k in j1 if j1.get(k) != j2.get(k)]}",
              a2.where)
    rep.check(f"{name}: a JSON body answers as the compact query", j1 == j3,
              "same answer" if j1 == j3 else f"differ in {[k for k in j1 if j1.get(k) != j3.get(k)]}", a3.where)


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

    states = [(PATHS[k % 4], rng.getrandbits(64)) for k in range(40)]
    for k, st in enumerate(states):
        run_case(rep, f"adjustable random loan {k + 1}", check_random, st)

    for label, case, exercise in EDGE_CASES:
        run_case(rep, f"adjustable edge: {label}", check_case, case, exercise)

    run_case(rep, "Appendix H-14", check_h14)
    run_case(rep, "comment 17(c)(1)-10", check_17c1_10)
    run_case(rep, "comment 43(c)(5)(i)-5.ii", check_43c5i)
    run_case(rep, "comment 43(e)(2)(iv)-7.iii", check_43e2iv)

    every_key = {"principal": "250000", "annual_rate_percent": "5.875", "term_months": "360",
                 "interest_only_payments": "36", "path": "index_values", "index_values": ["4.8", "5.6"],
                 "adjustable": {"index_percent": "4.5", "margin_percent": "2.75", "first_change_payment": "61",
                                "change_every": "12", "first_change_cap_percent": "2", "periodic_cap_percent": "2",
                                "lifetime_max_percent": "11", "floor_percent": "3", "rounding": "nearest_eighth",
                                "payment_cap_percent": "7.5"}}
    run_case(rep, "syntax, every key", check_syntaxes, every_key)
    for k, st in enumerate(states[:8]):
        run_case(rep, f"syntax, random loan {k + 1}", check_syntaxes, random_case(random.Random(st[1]), st[0]))

    for o in rep.observations:
        print(f"note  {o}")
    print(f"      ({time.time() - t0:.1f} s)")
    print(f"adjustable: {rep.passed} passed, {rep.failed} failed")
    return 1 if rep.failed else 0


if __name__ == "__main__":
    sys.exit(main())
