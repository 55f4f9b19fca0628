#!/usr/bin/env python3
"""Cross-check Residue's closed-form derivations against general-purpose references.

Residue solves x[k+1] = a·x[k] + f[k], x[0] = x0, through the z-transform:
X(z)/z = N(z) / Π (z − p)^m, pole-zero cancellation, partial fractions, and
the transform table back to x[k] = Σ (polynomial in k)·p^k + Σ c·δ[k − j].
It computes in 28-digit decimals. This script posts deliberately chosen
problems to a running server and compares every part of its answer with
references that share none of its code:

* sympy.rsolve — solves the recurrence symbolically in exact sympy.Rational
  arithmetic (the decimal strings are exact rationals: Rational('1.005') is
  201/200). Its solution, evaluated exactly, is compared with the service's
  `values` and with the service's closed form (modes and impulses evaluated
  here in exact Fractions from the strings). If rsolve fails or takes too
  long on a case, the check falls back on exact stepping and says so.
* exact stepping — x[k+1] = a·x[k] + f[k] run exactly, the most literal
  reading of the problem, compared as fractions.Fraction values. Every x[k] is
  a terminating decimal, so the steps run in decimal.Decimal with unlimited
  precision and every rounding trapped (Fraction's gcd at every step would take
  a quarter of an hour at k = 6000 with 28-digit factors). A second reference
  for the values and the reference for the transform's power series.
* sympy (cancel, roots, residue) on the exact X(z)/z of the transform table
  (impulse c ↔ c, step c ↔ c·z/(z − 1), geometric c·g^k ↔ c·z/(z − g),
  ramp c·k ↔ c·z/(z − 1)²): the service's numerator, its cancelled poles, its
  pole set with multiplicities and its partial-fraction coefficients.
* scipy.signal.residuez — the floating-point partial fractions of X(z) in
  powers of z^-1, built from the service's (uncancelled) transform: the pole
  set and multiplicities, residues of simple poles, direct terms (the
  impulses) and the time-domain sequence rebuilt from the expansion.
* mpmath at 60 digits — a loan's periodic rate, j/p, or (1 + j/m)^(m/p) − 1
  when interest compounds m times a year and payments are p times a year.
* decimal.Decimal — the posted loan ledger's identities (Σ principal equals
  the principal, the balance ends at zero, each row adds up, interest is the
  balance times the rate rounded half up to the cent).

Tolerances (all stated where they are used):

* Exact references: |service − exact| ≤ 1e-20 · S_k with
  S_k = max(1, M_k, T_k), where M_k = |a|^k·|x0| + Σ_{j<k} |a|^(k−1−j)·|f[j]|
  is the size x[k] would have if nothing cancelled, and T_k is the sum of the
  magnitudes of the additive terms of the exact closed form at k (it exceeds
  M_k when two poles are close and their modes cancel). 28-digit arithmetic
  on terms of size S_k has rounding errors of about 1e-27·S_k per operation,
  so 1e-20 leaves room for the few hundred operations of a power a^k while
  still catching any error in a derivation.
* Merged poles: when the service merges a pole g into a (|g − a| < 1e-14) it
  solves a slightly different problem; replacing Σ_{j<k} g^j·a^(k−1−j) by
  k·a^(k−1) errs by at most about (k − 1)·|g − a|/(2·min(|a|, |g|)) relatively,
  so those cases compare values only, to (1e-20 + k·|g − a|/min(|a|, |g|))·S_k
  with S_k = max(1, M_k) (T_k is left out: the exact two-pole expansion has
  terms of size c/|g − a| that the merged answer never forms).
* scipy (float64): pole sets are matched within 1e-6 relative; residuez groups
  roots within tol = 1e-4 (np.roots finds an m-fold pole only to about
  eps^(1/m): 1.5e-8 for a double pole, 6e-6 for a triple one, so 1e-6 cannot
  group a triple pole). Residues and sequences agree to 1e-8 relative to the
  expansion's size, or to a looser bound propagated from scipy's own measured
  pole error where clustered poles make float64 worse (see check_scipy; each
  line prints the tolerance used). The case with distinct poles 1e-10 apart
  skips scipy: float64 cannot tell them from a repeated pole.
* Periodic rates: 1e-26 absolute against mpmath (28 decimal places hold a
  rate to 1e-28; a root and a power cost a few units of the last place).

Usage: python tests/crosscheck/crosscheck.py --base-url http://127.0.0.1:18531
Prints one line per check and ends with `crosscheck: N passed, M failed`;
exits 1 if any check failed.
"""

from __future__ import annotations

import argparse
import json
import math
import signal
import sys
import time
import urllib.error
import urllib.request
import decimal
from dataclasses import dataclass, field
from decimal import Decimal
from fractions import Fraction
from math import comb

import mpmath
import numpy as np
import scipy.signal
import sympy as sp

# Exact values at k = 6000 with 28-digit poles have about 170,000 digits.
sys.set_int_max_str_digits(0)

EXACT_TOL = Fraction(1, 10**20)
FLOAT_TOL = 1e-8
SCIPY_GROUP_TOL = 1e-4
SCIPY_MATCH_TOL = 1e-6
PER_YEAR = {"annual": 1, "semiannual": 2, "quarterly": 4, "monthly": 12,
            "semimonthly": 24, "biweekly": 26, "weekly": 52, "daily": 365}
RSOLVE_SECONDS = 30

K = sp.Symbol("k", integer=True, nonnegative=True)
Z = sp.Symbol("z")
X = sp.Function("x")


# --------------------------------------------------------------------------
# Cases
# --------------------------------------------------------------------------


def step(amount):
    return {"kind": "step", "amount": amount}


def impulse(amount):
    return {"kind": "impulse", "amount": amount}


def geometric(amount, ratio):
    return {"kind": "geometric", "amount": amount, "ratio": ratio}


def ramp(amount):
    return {"kind": "ramp", "amount": amount}


@dataclass
class Case:
    name: str
    a: object
    x0: object
    inputs: list
    evaluate_at: list
    # Poles this close are expected to be merged by the service (values only).
    merged: bool = False
    # Distinct poles closer than SCIPY_GROUP_TOL: float64 cannot separate them.
    near_poles: bool = False
    why: str = ""


A7 = "1.0058333333333333333333333333"  # 1 + 0.07/12 to 28 decimals
A5 = "1.0041666666666666666666666667"  # 1 + 0.05/12 to 28 decimals

CASES = [
    Case("level-6%-360", "1.005", "100000", [step("-599.55")], [0, 1, 2, 12, 120, 359, 360],
         why="the classic level loan: simple poles at a and 1"),
    Case("level-7.125%-6000", "1.0059375", "250000", [step("-1500")], [0, 1, 180, 360, 3000, 6000],
         why="a balance that grows: a^6000 ≈ 2.6e15"),
    Case("level-7%-28digit", A7, "300000", [step("-1995.91")], [0, 1, 100, 359, 360],
         why="a given to 28 decimals"),
    Case("level-1.2%-6000", "1.0001", "1000000", [step("-221.64")], [0, 1, 1000, 3000, 5999, 6000],
         why="a long term with a close to 1"),
    Case("level-5%-28digit-6000", A5, "500000", [step("-2090")], [0, 1, 600, 4000, 6000],
         why="28-digit a at the longest term"),
    Case("savings-deposits", "1.004", "0", [step("200")], [0, 1, 120, 480],
         why="deposits into an account, x0 = 0"),
    Case("zero-rate-loan", "1", "1200", [step("-100")], [0, 1, 5, 12, 13],
         why="a = 1 and a step: double pole at z = 1"),
    Case("zero-rate-savings", "1", "0", [step("250")], [0, 1, 48, 6000],
         why="double pole at z = 1 with no x0"),
    Case("growth-equals-rate", "1.004", "0", [geometric("100", "1.004")], [0, 1, 2, 24, 360],
         why="g = a: double pole at z = a"),
    Case("growth-equals-rate-mixed", "1.005", "1000", [geometric("50", "1.005"), step("-10")], [0, 1, 30, 240],
         why="double pole at a plus a simple pole at 1"),
    Case("ramp-zero-rate", "1", "0", [ramp("1")], [0, 1, 2, 10, 100, 6000],
         why="a = 1 and a ramp: triple pole at z = 1"),
    Case("ramp-zero-rate-mixed", "1", "500", [ramp("3"), step("-7")], [0, 2, 50, 360],
         why="triple pole at z = 1 with x0 and a step"),
    Case("ramp-impulse-step", "1.01", "50", [impulse("7"), ramp("3"), step("-2")], [0, 1, 2, 17, 60],
         why="double pole at 1, simple at a, a pole at 0"),
    Case("impulse-only", "1.005", "0", [impulse("1000")], [0, 1, 2, 12],
         why="x[k] = 1000·a^(k−1) for k ≥ 1: an impulse in the closed form"),
    Case("impulse-with-x0", "1.02", "100", [impulse("-50")], [0, 1, 2, 30],
         why="an impulse that does not divide a evenly (−50/1.02)"),
    Case("impulse-zero-rate", "1", "10", [impulse("5")], [0, 1, 2, 100],
         why="poles at 1 and 0"),
    Case("two-impulses", "1.5", "2", [impulse("3"), impulse("-1")], [0, 1, 2, 3, 20],
         why="two impulses share the pole at 0"),
    Case("everything", "1.005", "100000",
         [step("-599.55"), impulse("7"), geometric("100", "1.004"), ramp("3")], [0, 1, 12, 360],
         why="all four inputs: poles at 0, 1 (double), 1.004 and 1.005"),
    Case("decaying-geometric", "1.003", "20000", [geometric("-150", "0.99")], [0, 1, 50, 240],
         why="a geometric input with ratio below 1"),
    Case("geometric-ratio-one", "1.01", "0", [geometric("10", "1"), step("5")], [0, 1, 12, 100],
         why="a ratio-1 geometric and a step share the pole at 1"),
    Case("geometric-ratio-one-zero-rate", "1", "3", [geometric("10", "1")], [0, 1, 12, 100],
         why="ratio 1 with a = 1: double pole at 1"),
    Case("interest-only", "1.005", "100000", [step("-500")], [0, 1, 12, 360],
         why="x[k] stays 100000: the numerator cancels the pole at a"),
    Case("geometric-cancels-a", "1.005", "20000", [geometric("100", "1.01")], [0, 1, 12, 120],
         why="x0 = c/(g − a): the mode at a cancels, x[k] = 20000·1.01^k"),
    Case("halving", "0.5", "8", [step("3")], [0, 1, 2, 3, 50],
         why="a = 0.5: the balance decays towards 6"),
    Case("decay-with-ramp", "0.97", "1000", [step("10"), ramp("0.5")], [0, 1, 10, 200],
         why="a below 1, double pole at 1"),
    Case("high-rate", "1.3", "1000", [step("-400")], [0, 1, 2, 3, 10],
         why="30 % a period"),
    Case("small-a-with-impulse", "0.01", "5", [impulse("3"), step("2")], [0, 1, 2, 3, 40],
         why="a pole at 0.01 beside the impulse's pole at 0"),
    Case("json-numbers", 1.005, 100000, [{"kind": "step", "amount": -599.55}], [0, 12, 360],
         why="numbers sent as JSON numbers instead of strings"),
    Case("merged-25th-digit", A5, "0", [geometric("100", "1.0041666666666666666666656667")],
         [0, 1, 120, 360, 6000], merged=True,
         why="g differs from a in the 25th digit (1e-24): merged into a double pole"),
    Case("merged-1e-16", A5, "0", [geometric("100", "1.0041666666666665666666666667")],
         [0, 1, 120, 360], merged=True,
         why="g = a − 1e-16: merged, error ≈ k·1e-16/2 relative"),
    Case("near-distinct-1e-10", A5, "0", [geometric("100", "1.0041666667666666666666666667")],
         [0, 1, 120, 360], near_poles=True,
         why="g = a + 1e-10: kept as two poles whose modes (≈1e12) nearly cancel"),
]

LOAN_CASES = [
    ("loan-6%-360", {"principal": "100000", "annual_rate_percent": "6", "term_months": 360}),
    ("loan-7.125%-360", {"principal": "250000", "annual_rate_percent": "7.125", "term_months": 360}),
    ("loan-7%-180", {"principal": "300000", "annual_rate_percent": "7", "term_months": 180}),
    ("loan-0%-48", {"principal": "12000", "annual_rate_percent": "0", "term_months": 48}),
    ("loan-payment-given", {"principal": "100000", "annual_rate_percent": "6", "payment": "1000"}),
    ("loan-weekly-monthly-compounding",
     {"principal": "20000", "annual_rate_percent": "5", "term_months": 60,
      "payment_frequency": "weekly", "compounding": "monthly"}),
    ("loan-5%-1200", {"principal": "500000", "annual_rate_percent": "5", "term_months": 1200}),
    # At 5 % a 6000-month payment rounds to the first month's interest (2083.33), which
    # the service rightly refuses; 1.2 % (i = 0.001) still amortizes over 6000 payments.
    ("loan-1.2%-6000", {"principal": "500000", "annual_rate_percent": "1.2", "term_months": 6000}),
    # Exact half cents: 249960 · 0.0325/12 = 676.975 (by hand), while 0.0325/12 has no
    # finite decimal; the interest must round that tie up, as the exact ratio says.
    ("loan-tie-3.25%-360", {"principal": "249960", "annual_rate_percent": "3.25", "term_months": 360}),
    ("loan-tie-half-even-5%-12",
     {"principal": "1018.80", "annual_rate_percent": "5", "term_months": 12, "interest_rounding": "half_even"}),
    ("loan-tie-one-payment", {"principal": "249960", "annual_rate_percent": "3.25", "term_months": 1}),
]


# --------------------------------------------------------------------------
# Reporting
# --------------------------------------------------------------------------


class Report:
    def __init__(self):
        self.passed = 0
        self.failed = 0

    def check(self, case: str, what: str, ok: bool, detail: str = ""):
        if ok:
            self.passed += 1
        else:
            self.failed += 1
        print(f"{'PASS' if ok else 'FAIL'}  {case:<32} {what:<44} {detail}", flush=True)

    def skip(self, case: str, what: str, why: str):
        print(f"SKIP  {case:<32} {what:<44} {why}", flush=True)


def fmt(x) -> str:
    """A short float rendering of an exact or float error."""
    try:
        return f"{float(x):.3g}"
    except OverflowError:
        return "huge"


# --------------------------------------------------------------------------
# HTTP
# --------------------------------------------------------------------------


def post(base: str, path: str, body: dict, timeout: float = 120):
    req = urllib.request.Request(
        base.rstrip("/") + path,
        data=json.dumps(body).encode(),
        headers={"Content-Type": "application/json", "Accept": "application/json"},
        method="POST",
    )
    try:
        with urllib.request.urlopen(req, timeout=timeout) as resp:
            return resp.status, json.loads(resp.read().decode())
    except urllib.error.HTTPError as e:
        text = e.read().decode(errors="replace")
        return e.code, text[:400]


# --------------------------------------------------------------------------
# Exact helpers
# --------------------------------------------------------------------------


def q(value) -> Fraction:
    """An exact rational from a decimal string (or a JSON number, read as its text)."""
    return Fraction(str(value))


def rat(f: Fraction) -> sp.Rational:
    return sp.Rational(f.numerator, f.denominator)


def frac(r) -> Fraction:
    if not isinstance(r, sp.Rational):
        r = sp.simplify(r)
    if not isinstance(r, sp.Rational):
        raise ValueError(f"not an exact rational: {str(r)[:80]}")
    return Fraction(int(r.p), int(r.q))


# Exact decimal arithmetic: unlimited precision, and any rounding at all raises
# decimal.Inexact, so a value that comes out is exact. Sums of long decimals align
# by shifting limbs, where Fraction would take a gcd of ~170,000-digit numbers at
# every step (a quarter of an hour for k = 6000 with two 28-digit factors).
EXACT = decimal.Context(prec=decimal.MAX_PREC, Emax=decimal.MAX_EMAX, Emin=decimal.MIN_EMIN,
                        traps=[decimal.Inexact, decimal.Rounded, decimal.InvalidOperation,
                               decimal.Overflow, decimal.DivisionByZero])


class Stepped:
    """x[0..kmax] by exact stepping; indexing gives fractions.Fraction, `.raw` the Decimals."""

    def __init__(self, raw: list):
        self.raw = raw
        self._cache = {}

    def __len__(self) -> int:
        return len(self.raw)

    def __getitem__(self, k: int) -> Fraction:
        if k not in self._cache:
            self._cache[k] = Fraction(self.raw[k])
        return self._cache[k]


def exact_stepping(case: Case, kmax: int) -> Stepped:
    """Reference: exact stepping of x[k+1] = a·x[k] + f[k], the most literal reading
    of the problem, in decimal.Decimal with every rounding trapped (so exact
    rationals, compared as fractions.Fraction)."""
    D = lambda v: EXACT.create_decimal(str(v))  # noqa: E731
    a, x = D(case.a), D(case.x0)
    out = [x]
    geo = [(D(i["amount"]), D(i["ratio"])) for i in case.inputs if i["kind"] == "geometric"]
    powers = [D(1)] * len(geo)  # g^k, kept incrementally
    others = [(i["kind"], D(i["amount"])) for i in case.inputs if i["kind"] != "geometric"]
    for k in range(kmax):
        f = D(0)
        for kind, c in others:
            if kind == "step" or (kind == "impulse" and k == 0):
                f = EXACT.add(f, c)
            elif kind == "ramp":
                f = EXACT.add(f, EXACT.multiply(c, k))
        for n, (c, g) in enumerate(geo):
            f = EXACT.add(f, EXACT.multiply(c, powers[n]))
            powers[n] = EXACT.multiply(powers[n], g)
        x = EXACT.add(EXACT.multiply(a, x), f)
        out.append(x)
    return Stepped(out)


def magnitudes(case: Case, kmax: int) -> list[float]:
    """M_k = |a|^k |x0| + Σ_{j<k} |a|^(k−1−j) |f[j]|, the size of x[k] if nothing cancelled."""
    a = abs(float(q(case.a)))
    y = abs(float(q(case.x0)))
    out = [y]
    for k in range(kmax):
        f = 0.0
        for inp in case.inputs:
            c = abs(float(q(inp["amount"])))
            kind = inp["kind"]
            if kind == "impulse":
                f += c if k == 0 else 0.0
            elif kind == "step":
                f += c
            elif kind == "geometric":
                f += c * abs(float(q(inp["ratio"]))) ** k
            else:
                f += c * k
        y = a * y + f
        out.append(y)
    return out


def closed_form_value(cf: dict, k: int) -> Fraction:
    """The service's closed form, evaluated here exactly from its strings."""
    total = Fraction(0)
    for mode in cf["modes"]:
        poly = Fraction(0)
        for c in reversed(mode["polynomial"]):
            poly = poly * k + q(c)
        total += poly * q(mode["pole"]) ** k
    for imp in cf["impulses"]:
        if imp["at"] == k:
            total += q(imp["amount"])
    return total


class Timeout(Exception):
    pass


def _alarm(signum, frame):
    raise Timeout()


@dataclass
class RsolveResult:
    expr: object = None  # valid for k ≥ start
    start: int = 0
    terms: list = field(default_factory=list)
    error: str = ""

    def value(self, case: Case, k: int) -> Fraction:
        if k < self.start:
            return q(case.x0)
        return frac(self.expr.subs(K, k))

    def term_scale(self, k: int) -> float:
        """T_k: Σ |term(k)| over the additive terms of the expanded exact solution."""
        if k < self.start:
            return 0.0
        return sum(abs(float(frac(t.subs(K, k)))) for t in self.terms)


def run_rsolve(case: Case) -> RsolveResult:
    """Reference: sympy.rsolve on x(k+1) − a·x(k) − f(k) = 0 in exact Rationals.

    rsolve has no Kronecker delta, so an impulse c·δ[k] is taken into the
    initial condition instead: the solution for k ≥ 1 starts from
    x(1) = a·x0 + f(0), with the remaining (impulse-free) inputs as f.
    """
    a, x0 = rat(q(case.a)), rat(q(case.x0))
    f = sp.Integer(0)
    impulses = sp.Integer(0)
    for inp in case.inputs:
        c = rat(q(inp["amount"]))
        kind = inp["kind"]
        if kind == "impulse":
            impulses += c
        elif kind == "step":
            f += c
        elif kind == "geometric":
            f += c * rat(q(inp["ratio"])) ** K
        else:
            f += c * K
    if impulses != 0:
        start, init = 1, {X(1): a * x0 + f.subs(K, 0) + impulses}
    else:
        start, init = 0, {X(0): x0}
    old = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(RSOLVE_SECONDS)
    try:
        sol = sp.rsolve(X(K + 1) - a * X(K) - f, X(K), init)
        if sol is None:
            return RsolveResult(error="rsolve returned no solution")
        if sol.has(X) or sol.free_symbols - {K}:
            return RsolveResult(error=f"rsolve left unknowns: {str(sol)[:60]}")
        # rsolve's answer is only a reference once it satisfies the problem: the initial
        # condition, and the recurrence exactly at a few k (for a = 0 it has been seen
        # to return x(k) = f, dropping x(0)).
        (k0, v0), = init.items()
        if sol.subs(K, k0.args[0]) != v0:
            return RsolveResult(error=f"rsolve's solution misses the initial condition {k0} = {v0}")
        for k in range(start, start + 4):
            if sol.subs(K, k + 1) - a * sol.subs(K, k) - f.subs(K, k) != 0:
                return RsolveResult(error=f"rsolve's solution fails the recurrence at k = {k}")
        terms = list(sp.Add.make_args(sp.expand(sol)))
        return RsolveResult(expr=sol, start=start, terms=terms)
    except Timeout:
        return RsolveResult(error=f"rsolve took over {RSOLVE_SECONDS} s")
    except Exception as e:  # noqa: BLE001 - any failure means falling back
        return RsolveResult(error=f"rsolve failed: {type(e).__name__}: {str(e)[:60]}")
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


def table_transform(case: Case):
    """Exact X(z)/z from the z-transform table: x0/(z − a) + F(z)/(z·(z − a))."""
    a, x0 = rat(q(case.a)), rat(q(case.x0))
    F = sp.Integer(0)
    for inp in case.inputs:
        c = rat(q(inp["amount"]))
        kind = inp["kind"]
        if kind == "impulse":
            F += c
        elif kind == "step":
            F += c * Z / (Z - 1)
        elif kind == "geometric":
            F += c * Z / (Z - rat(q(inp["ratio"])))
        else:
            F += c * Z / (Z - 1) ** 2
    return x0 / (Z - a) + F / (Z * (Z - a))


def within(err: Fraction, scale, tol) -> bool:
    return abs(err) <= Fraction(tol) * Fraction(scale)


# --------------------------------------------------------------------------
# Recurrence checks
# --------------------------------------------------------------------------


def check_recurrence(base: str, case: Case, rep: Report):
    body = {"a": case.a, "x0": case.x0, "inputs": case.inputs, "evaluate_at": case.evaluate_at}
    t0 = time.time()
    status, answer = post(base, "/api/v1/recurrence", body)
    if status != 200 or not isinstance(answer, dict):
        # Reference: the API contract (a well-posed recurrence is answered with 200).
        rep.check(case.name, "POST /api/v1/recurrence answers 200", False, f"HTTP {status}: {answer}")
        return
    try:
        d = answer["derivation"]
        values = {int(v["k"]): q(v["value"]) for v in answer["values"]}
        cf = d["closed_form"]
    except (KeyError, TypeError, ValueError) as e:
        rep.check(case.name, "answer has the documented shape", False, repr(e))
        return
    kmax = max(case.evaluate_at)
    # Exact stepping and magnitudes far enough for the power-series and closed-form checks.
    kref = max(kmax, 64)

    # Reference: the request itself — the service must solve the numbers it was given,
    # exactly (a JSON number 1.005 is the decimal 1.005, not the nearest binary double).
    rec = d["recurrence"]
    echoed = (q(rec["a"]) == q(case.a) and q(rec["x0"]) == q(case.x0)
              and len(rec["inputs"]) == len(case.inputs)
              and all(e["kind"] == i["kind"] and q(e["amount"]) == q(i["amount"])
                      and (i["kind"] != "geometric" or q(e["ratio"]) == q(i["ratio"]))
                      for e, i in zip(rec["inputs"], case.inputs)))
    rep.check(case.name, "echoed recurrence equals the request", echoed,
              "" if echoed else f"a={rec.get('a')} x0={rec.get('x0')}")
    missing = [k for k in case.evaluate_at if k not in values]
    if missing:
        rep.check(case.name, "values cover evaluate_at", False, f"missing k = {missing}")
        return

    stepped = exact_stepping(case, kref)
    mags = magnitudes(case, kref)
    rs = run_rsolve(case)

    def scale(k: int) -> float:
        # S_k = max(1, M_k, T_k); see the module docstring. A merged case leaves T_k out:
        # the exact two-pole expansion has terms of size c/|g − a| (1e26 for a gap of
        # 1e-24) that the service's merged double pole never forms, and T_k would make
        # the tolerance vacuous.
        t = rs.term_scale(k) if not rs.error and not case.merged else 0.0
        return max(1.0, mags[k], t)

    merge_delta = Fraction(0)
    if case.merged:
        a = q(case.a)
        for inp in case.inputs:
            if inp["kind"] == "geometric":
                g = q(inp["ratio"])
                merge_delta = max(merge_delta, abs(g - a) / min(abs(a), abs(g)))

    def tolerance(k: int) -> Fraction:
        # 1e-20 relative to S_k; merged cases add the merging error k·|g − a|/min(|a|, |g|).
        return EXACT_TOL + (k * merge_delta if case.merged else 0)

    def worst(errors):
        """(ok, detail) from [(k, err)] against the per-k tolerance."""
        ok = all(within(err, scale(k), tolerance(k)) for k, err in errors)
        k_w, e_w = max(errors, key=lambda ke: float(abs(ke[1])) / scale(ke[0]))
        return ok, (f"max rel err {fmt(abs(e_w) / Fraction(scale(k_w)))} at k={k_w} "
                    f"(tol {fmt(tolerance(k_w))})")

    # Reference: sympy.rsolve (exact); fallback: exact stepping.
    if rs.error:
        errs = [(k, values[k] - stepped[k]) for k in case.evaluate_at]
        ok, detail = worst(errs)
        rep.check(case.name, "values vs sympy.rsolve", ok,
                  f"{detail}; {rs.error}, fell back on exact stepping")
    else:
        errs = [(k, values[k] - rs.value(case, k)) for k in case.evaluate_at]
        ok, detail = worst(errs)
        rep.check(case.name, "values vs sympy.rsolve", ok, detail)

    # Reference: sympy.rsolve — the closed form itself (not just `values`), at the requested
    # k and at k = 0 … 2d + 3 (d the transform's degree): enough points to pin every
    # coefficient of every mode.
    degree = sum(p["multiplicity"] for p in d["transform"]["poles"])
    ks = sorted(set(case.evaluate_at) | set(range(min(kref, 2 * degree + 4))))
    ref_name = "sympy.rsolve" if not rs.error else "exact stepping (rsolve fallback)"
    errs = []
    for k in ks:
        exact = rs.value(case, k) if not rs.error else stepped[k]
        errs.append((k, closed_form_value(cf, k) - exact))
    ok, detail = worst(errs)
    rep.check(case.name, f"closed form vs {ref_name}", ok, f"{detail} over {len(ks)} k")

    # Reference: exact stepping (fractions.Fraction values), a second, independent reference.
    errs = [(k, values[k] - stepped[k]) for k in case.evaluate_at]
    ok, detail = worst(errs)
    rep.check(case.name, "values vs exact stepping (Fraction)", ok, detail)

    if case.merged:
        # Reference: the request — a and g differ by less than the service's documented
        # merge distance 1e-14, so the pair must be reported in merged_poles.
        a = q(case.a)
        gs = {q(i["ratio"]) for i in case.inputs if i["kind"] == "geometric"}
        pairs = [{q(p) for p in pair} for pair in d.get("merged_poles", [])]
        ok = all(any(pair == {a, g} for pair in pairs) for g in gs)
        rep.check(case.name, "merged_poles reports the near-equal pair", ok,
                  f"merged_poles = {d.get('merged_poles')}")
        for what in ("transform vs table (sympy.cancel)", "partial fractions vs sympy",
                     "scipy.signal.residuez"):
            rep.skip(case.name, what, "merged poles: the service solves the merged problem; values only")
        return
    else:
        # Reference: the request — poles at least 1e-14 apart must not be merged.
        ok = not d.get("merged_poles")
        rep.check(case.name, "no poles merged", ok, "" if ok else f"merged_poles = {d.get('merged_poles')}")

    check_transform(case, d, stepped, scale, rep)
    check_scipy(case, d, values, scale, rep)
    print(f"      {case.name}: {time.time() - t0:.1f} s", flush=True)


def service_rational(d: dict):
    """The service's uncancelled X(z)/z = N(z)/Π (z − p)^m as sympy objects."""
    t = d["transform"]
    numer = sum(rat(q(c)) * Z**i for i, c in enumerate(t["numerator"]))
    poles = [(q(p["at"]), int(p["multiplicity"])) for p in t["poles"]]
    denom = sp.Integer(1)
    for p, m in poles:
        denom *= (Z - rat(p)) ** m
    return sp.expand(numer), poles, denom


def check_transform(case: Case, d: dict, stepped, scale, rep: Report):
    exact = table_transform(case)
    numer, poles, denom = service_rational(d)

    # Reference: z-transform table + sympy.cancel. With the service's denominator, the
    # exact numerator is cancel(X(z)/z · D(z)); it must be a polynomial equal to the
    # service's numerator (to 1e-20 of its largest coefficient: products of long
    # decimals may round in 28 digits).
    want = sp.cancel(sp.together(exact * denom))
    wn, wd = sp.fraction(want)
    if wd.has(Z):
        rep.check(case.name, "transform vs table (sympy.cancel)", False,
                  f"the service's denominator misses poles: leftover {wd}")
    else:
        want_c = [frac(c / wd) for c in reversed(sp.Poly(wn, Z).all_coeffs())]
        have_c = [q(c) for c in d["transform"]["numerator"]]
        n = max(len(want_c), len(have_c))
        want_c += [Fraction(0)] * (n - len(want_c))
        have_c += [Fraction(0)] * (n - len(have_c))
        size = max([Fraction(1)] + [abs(c) for c in want_c])
        err = max(abs(w - h) for w, h in zip(want_c, have_c))
        rep.check(case.name, "transform vs table (sympy.cancel)", err <= EXACT_TOL * size,
                  f"max coefficient err {fmt(err / size)} relative")

    # Reference: exact stepping (fractions.Fraction values). The power series of the service's
    # X(z) = z·N(z)/D(z) in z^-1 (exact long division) must reproduce x[0], x[1], …
    # Two rational functions of degree ≤ d agreeing on 2d + 1 terms are equal; we use 2d + 8.
    dcoef = [frac(c) for c in reversed(sp.Poly(sp.expand(denom), Z).all_coeffs())]  # ascending
    deg = len(dcoef) - 1
    ncoef = [q(c) for c in d["transform"]["numerator"]]
    # X(z) = Σ_i c_i z^(i+1) / Σ_j D_j z^j = B(w)/A(w) with w = z^-1:
    # A[r] = D[deg − r], B[r] = c[deg − 1 − r].
    A = [dcoef[deg - r] for r in range(deg + 1)]
    B = [ncoef[deg - 1 - r] if 0 <= deg - 1 - r < len(ncoef) else Fraction(0) for r in range(deg + 1)]
    terms = min(2 * deg + 8, len(stepped))
    series = []
    for n in range(terms):
        h = B[n] if n < len(B) else Fraction(0)
        for r in range(1, min(n, deg) + 1):
            h -= A[r] * series[n - r]
        series.append(h / A[0])
    errs = [(n, series[n] - stepped[n]) for n in range(terms)]
    ok = all(within(e, scale(n), EXACT_TOL) for n, e in errs)
    n_w, e_w = max(errs, key=lambda ne: float(abs(ne[1])) / scale(ne[0]))
    rep.check(case.name, "transform power series vs exact stepping", ok,
              f"{terms} terms, max rel err {fmt(abs(e_w) / Fraction(scale(n_w)))} at k={n_w}")

    # Reference: sympy.cancel. The exact reduced X(z)/z tells which of the service's
    # denominator poles cancel against the numerator (counted with multiplicity).
    reduced = sp.cancel(exact)
    rn, rd = sp.fraction(reduced)
    exact_poles = {frac(p): m for p, m in sp.roots(sp.Poly(rd, Z)).items()} if rd.has(Z) else {}
    service_poles = {}
    for p, m in poles:
        service_poles[p] = service_poles.get(p, 0) + m
    expected_cancel = {}
    for p, m in service_poles.items():
        left = m - exact_poles.get(p, 0)
        if left > 0:
            expected_cancel[p] = left
    got_cancel = {}
    for p in d.get("cancelled_poles", []):
        got_cancel[q(p)] = got_cancel.get(q(p), 0) + 1
    ok = got_cancel == expected_cancel
    rep.check(case.name, "cancelled_poles vs sympy.cancel", ok,
              f"service {sorted(map(str, d.get('cancelled_poles', [])))}, "
              f"sympy {sorted(str(p) for p, m in expected_cancel.items() for _ in range(m))}")

    # Reference: sympy.roots + sympy.residue on the exact reduced X(z)/z. The poles and
    # multiplicities must match exactly; A_{p,j} = Res_{z=p} (z − p)^(j−1)·X(z)/z.
    fr = {q(f["pole"]): f for f in d["partial_fractions"]}
    have = {p: int(f["multiplicity"]) for p, f in fr.items()}
    if have != exact_poles:
        rep.check(case.name, "partial-fraction poles vs sympy.roots", False,
                  f"service {sorted((str(p), m) for p, m in have.items())}, "
                  f"sympy {sorted((str(p), m) for p, m in exact_poles.items())}")
        return
    rep.check(case.name, "partial-fraction poles vs sympy.roots", True,
              ", ".join(f"{float(p):g}×{m}" for p, m in sorted(have.items())))
    exact_coefs = {}
    for p, m in exact_poles.items():
        exact_coefs[p] = [frac(sp.residue((Z - rat(p)) ** (j - 1) * reduced, Z, rat(p)))
                          for j in range(1, m + 1)]
    size = max([Fraction(1)] + [abs(c) for cs in exact_coefs.values() for c in cs])
    err = Fraction(0)
    for p, cs in exact_coefs.items():
        got = [q(c) for c in fr[p]["coefficients"]]
        if len(got) != len(cs):
            err = Fraction(10**30)
            break
        err = max([err] + [abs(g - c) for g, c in zip(got, cs)])
    rep.check(case.name, "partial-fraction coefficients vs sympy.residue", err <= EXACT_TOL * size,
              f"max err {fmt(err / size)} of the largest coefficient")


def check_scipy(case: Case, d: dict, values: dict, scale, rep: Report):
    """Reference: scipy.signal.residuez on the service's transform, in float64.

    X(z) = z·N(z)/D(z) with D of degree d becomes B(z^-1)/A(z^-1) with
    A[r] = D[d − r] and B[r] = N[d − 1 − r]. residuez trims trailing zeros of
    both (the pole at z = 0 of X(z)/z cancels the z in front), returns
    r_i/(1 − p_i z^-1)^j terms and direct terms k_j z^-j (the impulses).

    Float64 tolerances follow scipy's own pole error. np.roots places clustered
    poles (1, 1, 1.004, 1.005 in one case) only to ~1e-8, and residues move by
    about m·ε/δ relative for a pole error ε and a gap δ to the nearest other
    pole (multiplicity m), p^k by k·ε. So with ε measured against the service's
    poles (which the sympy checks verified exactly), residues must agree to
    max(1e-8, 10·m·ε/δ) and sequences to max(1e-8, 10·ε·(k + m/δ)), relative to
    the size of the expansion; each line prints the tolerance it used.
    """
    if case.near_poles:
        for what in ("poles/multiplicities", "residues/direct terms", "sequence vs values"):
            rep.skip(case.name, f"scipy.signal.residuez {what}",
                     "poles 1e-10 apart: float64 cannot tell them from one double pole")
        return
    _, poles, denom = service_rational(d)
    dcoef = [float(frac(c)) for c in reversed(sp.Poly(sp.expand(denom), Z).all_coeffs())]
    deg = len(dcoef) - 1
    ncoef = [float(q(c)) for c in d["transform"]["numerator"]]
    a_arr = np.array([dcoef[deg - r] for r in range(deg + 1)])
    b_arr = np.array([ncoef[deg - 1 - r] if 0 <= deg - 1 - r < len(ncoef) else 0.0 for r in range(deg)])
    r, p, kdir = scipy.signal.residuez(b_arr, a_arr, tol=SCIPY_GROUP_TOL)
    r = np.asarray(r, dtype=complex)
    p = np.asarray(p, dtype=complex)
    kdir = np.asarray(kdir, dtype=float) if len(kdir) else np.zeros(0)

    # Group scipy's output: residuez gives a repeated pole the same value, powers 1, 2, …
    groups = []  # [pole, [r_1, r_2, …]]
    for ri, pi in zip(r, p):
        if groups and abs(groups[-1][0] - pi) <= SCIPY_MATCH_TOL * max(1.0, abs(pi)):
            groups[-1][1].append(ri)
        else:
            groups.append([pi, [ri]])
    rscale = max([1.0] + [abs(x) for x in r] + [abs(x) for x in kdir])

    # Reference: scipy.signal.residuez — the pole set and multiplicities. A pole whose
    # residues are all negligible (< 1e-9 of the expansion) cancelled against a zero; the
    # multiplicity is the highest power with a non-negligible residue. Poles match
    # within 1e-6 relative.
    found = []
    for pole, rs in groups:
        eff = max([j for j, rj in enumerate(rs, start=1) if abs(rj) > 1e-9 * rscale], default=0)
        if eff:
            found.append((pole, eff, rs))
    service = [(q(f["pole"]), int(f["multiplicity"]), f["coefficients"]) for f in d["partial_fractions"]]
    nonzero = [s for s in service if s[0] != 0]
    matched = []
    ok = len(found) == len(nonzero)
    for s_pole, sm, coefs in nonzero:
        hit = [f for f in found
               if abs(f[0] - float(s_pole)) <= SCIPY_MATCH_TOL * max(1.0, abs(float(s_pole)))]
        if len(hit) != 1 or hit[0][1] != sm:
            ok = False
        else:
            matched.append((s_pole, sm, coefs, hit[0]))
    desc_s = ", ".join(f"{float(s[0]):g}×{s[1]}" for s in nonzero)
    desc_f = ", ".join(f"{f[0].real:g}×{f[1]}" for f in found)
    rep.check(case.name, "scipy.signal.residuez poles/multiplicities", ok,
              f"service {{{desc_s}}}, scipy {{{desc_f}}}")

    # scipy's own pole error ε and the conditioning of the expansion (see the docstring).
    eps_p = max([abs(f[0] - float(s_pole)) / max(1.0, abs(float(s_pole))) for s_pole, _, _, f in matched],
                default=0.0)
    distinct = sorted(float(s[0]) for s in nonzero)
    gap = min([b - a for a, b in zip(distinct, distinct[1:])], default=math.inf)
    m_max = max([s[1] for s in nonzero], default=1)
    cond = m_max / gap if gap != math.inf else 0.0
    res_tol = max(FLOAT_TOL, 10 * eps_p * cond)

    # Reference: scipy.signal.residuez — simple poles: A/(z − p) in X(z)/z is
    # A·z/(z − p) = A/(1 − p z^-1) in X(z), so scipy's r equals the service's coefficient.
    # Impulses: A/z^j in X(z)/z is A·z^-(j−1) in X(z), scipy's direct term k_{j−1}.
    errs = [abs(f[2][0] - float(q(coefs[0]))) for _, sm, coefs, f in matched if sm == 1]
    zero = [s for s in service if s[0] == 0]
    n_direct = max([len(kdir)] + [len(s[2]) for s in zero])
    want_k = np.zeros(n_direct)
    for s in zero:
        for j, c in enumerate(s[2]):
            want_k[j] += float(q(c))
    have_k = np.zeros(n_direct)
    have_k[: len(kdir)] = kdir
    errs += [abs(x) for x in (want_k - have_k)]
    if errs:
        err = max(errs) / rscale
        rep.check(case.name, "scipy.signal.residuez residues/direct terms", err <= res_tol,
                  f"max err {err:.3g} of the expansion (tol {res_tol:.2g}, scipy pole err {eps_p:.2g})")
    else:
        rep.skip(case.name, "scipy.signal.residuez residues/direct terms",
                 "no simple pole or impulse (repeated poles are checked through the sequence)")

    # Reference: scipy.signal.residuez — the time domain, r/(1 − p z^-1)^m ↔
    # r·C(k+m−1, m−1)·p^k plus k_j·δ[k − j], against the service's values, relative to S_k.
    def seq(n: int) -> complex:
        total = 0j
        for pole, rs in groups:
            for j, rj in enumerate(rs, start=1):
                total += rj * comb(n + j - 1, j - 1) * pole**n
        if n < len(kdir):
            total += kdir[n]
        return total

    if not ok:
        rep.skip(case.name, "scipy.signal.residuez sequence vs values", "pole structure differs")
        return
    worst = None
    for n in case.evaluate_at:
        rel = abs(seq(n) - float(values[n])) / scale(n)
        tol = max(FLOAT_TOL, 10 * eps_p * (n + cond))
        if worst is None or rel / tol > worst[0] / worst[2]:
            worst = (rel, n, tol)
    rel, n, tol = worst
    rep.check(case.name, "scipy.signal.residuez sequence vs values", all(
        abs(seq(k) - float(values[k])) / scale(k) <= max(FLOAT_TOL, 10 * eps_p * (k + cond))
        for k in case.evaluate_at), f"max rel err {rel:.3g} at k={n} (tol {tol:.2g})")


# --------------------------------------------------------------------------
# Loan checks
# --------------------------------------------------------------------------


def cents(x: Fraction, rule: str = "half_up") -> Decimal:
    """x rounded exactly to the cent (no intermediate rounding): halves away from zero,
    or with rule "half_even" halves to the even cent."""
    hundredths = abs(x) * 100
    whole = math.floor(hundredths + Fraction(1, 2))
    if rule == "half_even" and hundredths - math.floor(hundredths) == Fraction(1, 2) and whole % 2 == 1:
        whole -= 1
    sign = -1 if x < 0 else 1
    return Decimal(sign * whole).scaleb(-2)


def check_loan(base: str, name: str, body: dict, rep: Report):
    t0 = time.time()
    status, ans = post(base, "/api/v1/loans/schedule", body)
    if status != 200 or not isinstance(ans, dict):
        rep.check(name, "POST /api/v1/loans/schedule answers 200", False, f"HTTP {status}: {ans}")
        return
    try:
        s = ans["summary"]
        d = ans["derivation"]
        rows = ans["schedule"]
        payment = q(s["payment"])
        i = q(s["periodic_rate"])
        n = int(s["number_of_payments"])
    except (KeyError, TypeError, ValueError) as e:
        rep.check(name, "answer has the documented shape", False, repr(e))
        return
    principal = q(body["principal"])
    a = 1 + i
    # Reference: the rate's definition — with payment and compounding at the same
    # frequency the periodic rate is j/p exactly (a Fraction); the service's
    # periodic_rate is that rounded to 28 digits, so the ledger's interest and the
    # payment are checked against the exact ratio (a balance times it can be an
    # exact half cent). An equivalent rate (a root) has no exact ratio: the
    # service's decimal stands in.
    p_freq = body.get("payment_frequency", "monthly")
    if body.get("compounding", p_freq) == p_freq:
        i_exact = q(body["annual_rate_percent"]) / 100 / PER_YEAR[p_freq]
    else:
        i_exact = i
    rounding = body.get("interest_rounding", "half_up")

    # Reference: mpmath at 60 digits — the periodic rate for the payment and compounding
    # frequencies. 28-digit decimals hold a rate below 1 to 28 decimal places (absolute
    # 1e-28, a relative 1e-25 for a weekly rate near 0.001); an n-th root and a power
    # cost a few units of that last place, so agree to 1e-26 absolute.
    p_per = PER_YEAR[body.get("payment_frequency", "monthly")]
    m_per = PER_YEAR[body.get("compounding", body.get("payment_frequency", "monthly"))]
    with mpmath.workdps(60):
        j = mpmath.mpf(str(body["annual_rate_percent"])) / 100
        want_i = j / p_per if p_per == m_per else (1 + j / m_per) ** (mpmath.mpf(m_per) / p_per) - 1
        err_i = abs(mpmath.mpf(s["periodic_rate"]) - want_i)
        ok = err_i <= mpmath.mpf("1e-26")
        rep.check(name, "periodic_rate vs mpmath", ok,
                  f"service {s['periodic_rate']}, abs err {mpmath.nstr(err_i, 3)} (tol 1e-26)")

    # Reference: the loan's definition — the derivation is of x[k+1] = (1 + i)·x[k] − P,
    # x[0] = principal, with P the posted (rounded) payment.
    rec = d["recurrence"]
    ok = (q(rec["a"]) == a and q(rec["x0"]) == principal and len(rec["inputs"]) == 1
          and rec["inputs"][0]["kind"] == "step" and q(rec["inputs"][0]["amount"]) == -payment)
    rep.check(name, "derivation is of the posted recurrence", ok,
              f"a={rec.get('a')} x0={rec.get('x0')} inputs={rec.get('inputs')}")

    # Reference: exact stepping (fractions.Fraction values) of the posted recurrence; the closed form,
    # evaluated exactly from its strings, must agree to 1e-20 of max(1, M_k).
    # Decimal strings for the stepping (str() of a Fraction would be "201/200").
    a_text = str(EXACT.add(Decimal(1), EXACT.create_decimal(s["periodic_rate"])))
    case = Case(name, a_text, str(body["principal"]), [step(str(EXACT.minus(EXACT.create_decimal(s["payment"]))))], [])
    stepped = exact_stepping(case, n)
    mags = magnitudes(case, n)
    ks = sorted(k for k in {0, 1, 2, n // 3, n // 2, max(n - 1, 0), n} if k <= n)
    errs = [(k, closed_form_value(d["closed_form"], k) - stepped[k]) for k in ks]
    worst = max(errs, key=lambda e: float(abs(e[1])) / max(1.0, mags[e[0]]))
    ok = all(abs(e) <= EXACT_TOL * Fraction(max(1.0, mags[k])) for k, e in errs)
    rep.check(name, "closed form vs exact stepping", ok,
              f"max rel err {fmt(abs(worst[1]) / Fraction(max(1.0, mags[worst[0]])))} at k={worst[0]}")

    # Reference: exact annuity payment P = principal·i/(1 − (1 + i)^−n) (principal/n at 0 %),
    # in Fractions, rounded half away from zero to the cent — only when the term was given.
    if "term_months" in body or "term_payments" in body:
        term_n = d.get("payment", {}).get("n") if isinstance(d.get("payment"), dict) else None
        term_n = term_n or n
        exact_p = principal / term_n if i == 0 else principal * i_exact / (1 - (1 + i_exact) ** -term_n)
        ok = cents(exact_p) == Decimal(s["payment"])
        rep.check(name, "payment vs exact annuity formula", ok,
                  f"service {s['payment']}, exact {float(exact_p):.10f}")
    else:
        # Reference: exact stepping — the first n with x[n] ≤ 0 under the given payment.
        first = next((k for k, x in enumerate(stepped.raw) if x <= 0 and k > 0), None)
        ok = first == n
        rep.check(name, "number of payments vs exact stepping", ok,
                  f"service {n}, first k with x[k] ≤ 0: {first}")

    # Reference: decimal.Decimal — the posted ledger's identities.
    P = [Decimal(r["payment"]) for r in rows]
    I = [Decimal(r["interest"]) for r in rows]
    Pr = [Decimal(r["principal"]) for r in rows]
    B = [Decimal(r["balance"]) for r in rows]
    rep.check(name, "ledger has number_of_payments rows", len(rows) == n, f"{len(rows)} rows, n = {n}")
    rep.check(name, "ledger ends at a zero balance", bool(B) and B[-1] == 0, f"final balance {B[-1] if B else None}")
    total_principal = sum(Pr, Decimal(0))
    rep.check(name, "Σ principal == principal", total_principal == Decimal(str(body["principal"])),
              f"Σ principal {total_principal}")
    prev = Decimal(str(body["principal"]))
    rows_ok, interest_ok, bad = True, True, None
    for r, p_, i_, pr_, b_ in zip(rows, P, I, Pr, B):
        if p_ != i_ + pr_ or b_ != prev - pr_:
            rows_ok = False
            bad = bad or r["number"]
        # Reference: Fractions — interest = balance × i (exact), rounded half up (the
        # default) or half to even.
        want = cents(Fraction(str(prev)) * i_exact, rounding)
        if i_ != want:
            interest_ok = False
            bad = bad or r["number"]
        prev = b_
    rep.check(name, "each row: payment = interest + principal, balance chain", rows_ok,
              "" if rows_ok else f"first bad row {bad}")
    rep.check(name, f"interest = balance × exact rate, {rounding}", interest_ok,
              "" if interest_ok else f"first bad row {bad}")
    regular_ok = all(p_ == Decimal(s["payment"]) for p_ in P[:-1]) and (not P or P[-1] == Decimal(s["final_payment"]))
    rep.check(name, "regular payments and final_payment as posted", regular_ok, f"final {s['final_payment']}")
    rep.check(name, "total_paid and total_interest add up",
              Decimal(s["total_paid"]) == sum(P, Decimal(0)) and Decimal(s["total_interest"]) == sum(I, Decimal(0)),
              f"total_paid {s['total_paid']}, total_interest {s['total_interest']}")

    # Reference: exact stepping — the reconciliation's largest drift is
    # max_{k<n} |ledger balance_k − x[k]|, and rounding bounds it by ½ cent · Σ_{j<k} a^j.
    rec_dto = ans.get("reconciliation")
    if rec_dto is None:
        rep.skip(name, "reconciliation largest_drift", "no reconciliation reported")
    else:
        drifts = [(int(r["number"]), abs(float(EXACT.subtract(b_, stepped.raw[int(r["number"])]))))
                  for r, b_ in zip(rows[:-1], B[:-1])]
        largest = max((dr for _, dr in drifts), default=0.0)
        got = float(q(rec_dto["largest_drift"]))
        # The service rounds it to 12 decimals; the float difference is far below that.
        ok = abs(got - largest) <= 1e-11 + 1e-13 * largest
        rep.check(name, "reconciliation largest_drift vs exact stepping", ok,
                  f"service {rec_dto['largest_drift']}, exact {float(largest):.12f}")
        # The bound, in float: ½ cent · Σ_{j<k} a^j (a relative slack of 1e-9 for float sums).
        bound_ok, partial, power, af = True, 0.0, 1.0, float(a)
        drift_at = dict(drifts)
        for k in range(1, n):
            partial += power
            power *= af
            if k in drift_at and drift_at[k] > 0.005 * partial * (1 + 1e-9):
                bound_ok = False
        rep.check(name, "drift within ½ cent · Σ_{j<k} a^j", bound_ok,
                  f"service bound {rec_dto.get('drift_bound')}")
    print(f"      {name}: {time.time() - t0:.1f} s", flush=True)


# --------------------------------------------------------------------------
# Savings plans (issue 5): annuity formulas against sympy.summation
# --------------------------------------------------------------------------
#
# Each case posts a savings plan to /api/v1/savings/plan. References:
#
# * sympy.summation — the plan's series, summed symbolically in P, a, g and the
#   number of periods n (or of years Y), must equal the formula of common
#   practice (no source) identically (sympy.simplify of the difference is 0):
#   ordinary annuity  Σ_{j<n} P·a^(n−1−j)          = P·(a^n − 1)/(a − 1);
#   annuity due       Σ_{j<n} P·a^(n−j)            = P·(a^n − 1)/(a − 1)·a;
#   growing annuity   Σ_{j<n} P·g^j·a^(n−1−j)      = P·(a^n − g^n)/(a − g)
#                     (n·P·a^(n−1) when g = a: the double pole at z = a);
#   yearly growth     Σ_{y<Y} Σ_{r<m} P·g^y·a^(mY−1−(my+r))
#                     = P·S·(A^Y − g^Y)/(A − g), A = a^m, S = (a^m − 1)/(a − 1).
#   The series is then evaluated exactly at the case's numbers (sympy Rationals
#   from the decimal strings; a = 1 + j/m exactly).
# * The service's closed form (its derivation's modes evaluated here exactly from
#   their strings: the period closed form at n, or for yearly growth the closed
#   form of the year-end balances at Y) against that exact sum, to 1e-20 relative
#   (28-digit arithmetic; a = 1 + j/m itself is rounded to 28 digits).
# * The posted final balance against the exact sum, within the rounding bound
#   ½ cent·(1 + d·t)·Σ_{j<n} a^j (d = 1 when growing deposits are rounded to the
#   cent, t = a for deposits at the start of the period, else 1).

SV_P, SV_A, SV_G = sp.symbols("P a g", positive=True)
SV_N = sp.Symbol("n", integer=True, positive=True)
SV_Y = sp.Symbol("Y", integer=True, positive=True)
SV_J = sp.Symbol("j", integer=True, nonnegative=True)
SV_R = sp.Symbol("r", integer=True, nonnegative=True)


@dataclass
class SavingsCase:
    name: str
    body: dict
    kind: str  # "ordinary", "due", "growing" (every period) or "yearly"
    n: int  # periods
    m: int = 12  # periods a year
    why: str = ""


SAVINGS_CASES = [
    SavingsCase("savings-ordinary-6%-120", {"deposit": "100", "annual_rate_percent": "6", "term_periods": 120},
                "ordinary", 120, why="future value of an ordinary annuity, i = 0.005 exactly"),
    SavingsCase("savings-ordinary-4.1%-96", {"deposit": "350", "annual_rate_percent": "4.1", "term_months": 96},
                "ordinary", 96, why="350 a month for 8 years at 4.1 %"),
    SavingsCase("savings-ordinary-0%-48", {"deposit": "250", "annual_rate_percent": "0", "term_months": 48},
                "ordinary", 48, why="a = 1: the double pole at z = 1 (the sum's a = 1 branch)"),
    SavingsCase("savings-due-6%-120",
                {"deposit": "100", "annual_rate_percent": "6", "term_periods": 120, "deposit_timing": "start"},
                "due", 120, why="future value of an annuity due"),
    SavingsCase("savings-due-3.5%-quarterly-80",
                {"deposit": "1000", "annual_rate_percent": "3.5", "term_periods": 80, "deposit_timing": "start",
                 "deposit_frequency": "quarterly"},
                "due", 80, m=4, why="quarterly deposits at the start of each quarter"),
    SavingsCase("savings-growing-4.8%-240",
                {"deposit": "250", "annual_rate_percent": "4.8", "term_periods": 240,
                 "deposit_growth_percent": "0.2", "deposit_growth_every": "period"},
                "growing", 240, why="growing annuity: a = 1.004, g = 1.002"),
    SavingsCase("savings-growing-equal-6%-360",
                {"deposit": "100", "annual_rate_percent": "6", "term_periods": 360,
                 "deposit_growth_percent": "0.5", "deposit_growth_every": "period"},
                "growing", 360, why="g = a = 1.005: the double pole at z = a"),
    SavingsCase("savings-growing-0%-120",
                {"deposit": "10", "annual_rate_percent": "0", "term_periods": 120,
                 "deposit_growth_percent": "1", "deposit_growth_every": "period"},
                "growing", 120, why="zero interest with growing deposits: poles at 1 and g"),
    SavingsCase("savings-yearly-4.1%-8y",
                {"deposit": "350", "annual_rate_percent": "4.1", "term_months": 96,
                 "deposit_growth_percent": "3", "deposit_growth_every": "year"},
                "yearly", 96, why="deposits level within a year, 3 % more each year: the two-level closed form"),
    SavingsCase("savings-yearly-due-5%-20y-annual",
                {"deposit": "1000", "annual_rate_percent": "5", "term_periods": 20, "deposit_frequency": "annual",
                 "deposit_growth_percent": "5", "deposit_timing": "start"},
                "yearly", 20, m=1, why="annual deposits growing at the rate: the yearly double pole at z = A"),
]


def savings_series(case: SavingsCase):
    """(series, formula): the plan's sum by sympy.summation and the formula of common practice."""
    P, a, g, n = SV_P, SV_A, SV_G, SV_N
    if case.kind == "ordinary":
        return (sp.summation(P * a ** (n - 1 - SV_J), (SV_J, 0, n - 1)), P * (a**n - 1) / (a - 1))
    if case.kind == "due":
        return (sp.summation(P * a ** (n - SV_J), (SV_J, 0, n - 1)), P * (a**n - 1) / (a - 1) * a)
    if case.kind == "growing":
        return (sp.summation(P * g**SV_J * a ** (n - 1 - SV_J), (SV_J, 0, n - 1)),
                P * (a**n - g**n) / (a - g))
    m, Y = case.m, SV_Y
    timing = a if case.body.get("deposit_timing") == "start" else 1
    inner = sp.summation(P * timing * g**SV_J * a ** (m * Y - 1 - (m * SV_J + SV_R)), (SV_R, 0, m - 1))
    series = sp.summation(inner, (SV_J, 0, Y - 1))
    A, S = a**m, (a**m - 1) / (a - 1) * timing
    return series, P * S * (A**Y - g**Y) / (A - g)


def general_branch(expr):
    """The last (unconditioned) branch of a Piecewise that sympy.summation may return."""
    expr = sp.piecewise_fold(expr)
    if isinstance(expr, sp.Piecewise):
        return expr.args[-1][0]
    return expr


def check_savings(base: str, case: SavingsCase, rep: Report):
    t0 = time.time()
    status, ans = post(base, "/api/v1/savings/plan", case.body)
    if status != 200 or not isinstance(ans, dict):
        rep.check(case.name, "POST /api/v1/savings/plan answers 200", False, f"HTTP {status}: {ans}")
        return
    try:
        s, d = ans["summary"], ans["derivation"]
        final = q(s["final_balance"])
        n_service = int(s["number_of_periods"])
    except (KeyError, TypeError, ValueError) as e:
        rep.check(case.name, "answer has the documented shape", False, repr(e))
        return
    rep.check(case.name, "number_of_periods is the term", n_service == case.n, f"{n_service} vs {case.n}")

    # Reference: sympy.summation — the series equals the formula identically.
    series, formula = savings_series(case)
    difference = sp.simplify(general_branch(series) - formula)
    rep.check(case.name, "sympy.summation == formula (symbolic)", difference == 0,
              f"difference {str(difference)[:60]}")

    # The numbers: a = 1 + j/m, g = 1 + growth/100, exactly.
    m = case.m
    a = 1 + q(case.body["annual_rate_percent"]) / 100 / m
    g = 1 + q(case.body.get("deposit_growth_percent", "0")) / 100
    if case.kind == "yearly" and "deposit_growth_percent" not in case.body:
        g = Fraction(1)
    values = {SV_P: rat(q(case.body["deposit"])), SV_A: rat(a), SV_G: rat(g)}
    if case.kind == "yearly":
        values[SV_Y] = case.n // m
    else:
        values[SV_N] = case.n
    exact = frac(sp.simplify(series.subs(values)))

    # Reference: sympy.summation (exact) — the service's closed form at the end of the term.
    if case.kind == "yearly":
        cf = d["yearly"]["closed_form"]
        got = closed_form_value(cf, case.n // m)
        where = f"yearly closed form at Y = {case.n // m}"
    else:
        cf = d["period"]["closed_form"]
        got = closed_form_value(cf, case.n)
        where = f"period closed form at n = {case.n}"
    scale = max(Fraction(1), abs(exact))
    err = got - exact
    rep.check(case.name, "closed form vs sympy.summation", within(err, scale, EXACT_TOL),
              f"{where}: rel err {fmt(abs(err) / scale)} (tol {fmt(EXACT_TOL)}); {case.why}")

    # Reference: sympy.summation — the posted ledger rounds interest (and growing deposits)
    # to the cent; its final balance stays within ½ cent·(1 + d·t)·Σ_{j<n} a^j of the sum.
    t = a if case.body.get("deposit_timing") == "start" else Fraction(1)
    rounded = 1 if case.kind in ("growing", "yearly") else 0
    geometric = sum((a**j for j in range(case.n)), Fraction(0))
    bound = Fraction(1, 200) * (1 + rounded * t) * geometric
    rep.check(case.name, "posted final balance within the rounding bound", abs(final - exact) <= bound,
              f"final {s['final_balance']}, exact {float(exact):.6f}, bound {float(bound):.4f}")
    print(f"      {case.name}: {time.time() - t0:.1f} s", flush=True)


# --------------------------------------------------------------------------


# Loan checks for the APR: (name, body). Invented loans, monthly payments, the
# first a month after the advance (regular periods), with and without prepaid
# finance charges; rates from 0.25 % to 29.99 %, terms from 6 to 480 months.
APR_CASES = []
for _n, (_p, _r, _t, _fee) in enumerate([
    ("100000", "6", 360, None), ("57919", "3.1", 360, None), ("250000", "6.875", 360, "4375.50"),
    ("18500", "8.49", 72, "395"), ("4200", "29.99", 24, "150"), ("640000", "0.25", 480, "12800"),
    ("9999.99", "12.5", 6, None), ("325000", "7.125", 180, "6500"), ("1500", "19.9", 12, "75"),
    ("780000", "5.5", 240, "15600.75"), ("42000", "0.001", 60, None), ("123456.78", "9.75", 300, "2469.14"),
]):
    _body = {"principal": _p, "annual_rate_percent": _r, "term_months": _t}
    if _fee is not None:
        _body["prepaid_finance_charges"] = [{"name": "origination", "amount": _fee}]
    APR_CASES.append((f"apr {_n + 1}: {_p} at {_r} % over {_t} months, fee {_fee}", _body))


def check_apr(base: str, name: str, body: dict, rep: Report):
    """The APR of a check against the root of the Appendix J equation by mpmath.

    12 CFR 1026 Appendix J (b)(8): the amount financed advanced at time 0 equals
    the payments discounted at the unit-period rate i; with the regular monthly
    periods of these loans, payment t falls t unit periods later. The payments are
    the service's posted ones (n − 1 of the computed payment and the final one);
    mpmath solves the equation at 50 digits. The service's 28-digit APR must agree
    to 1e-20 percentage points.
    """
    status, c = post(base, "/api/v1/loans/check", body)
    if status != 200 or not isinstance(c, dict):
        rep.check(name, "POST /api/v1/loans/check answers 200", False, f"HTTP {status}: {c}")
        return
    with mpmath.workdps(50):
        af = mpmath.mpf(c["amount_financed"])
        pay = mpmath.mpf(c["computed_payment"])
        last = mpmath.mpf(c["final_payment"])
        n = int(c["number_of_payments"])

        def g(i):
            v = 1 / (1 + i)
            # Σ_{t=1}^{n−1} pay·v^t in closed form, and the final payment at n.
            run = pay * v * (1 - v ** (n - 1)) / (1 - v) if n > 1 else 0
            return run + last * v**n - af

        if pay * (n - 1) + last == af:
            want = mpmath.mpf(0)
        else:
            want = mpmath.findroot(g, (mpmath.mpf("1e-9"), mpmath.mpf(1)), solver="anderson") * 12 * 100
        got = mpmath.mpf(c["apr_percent_full"])
        err = abs(got - want)
        rep.check(
            name,
            "APR agrees with mpmath's root of the Appendix J equation to 1e-20 points",
            err < mpmath.mpf("1e-20"),
            f"service {c['apr_percent_full']}, mpmath {mpmath.nstr(want, 30)}, difference {mpmath.nstr(err, 3)}",
        )
        # The two-decimal APR is the full one rounded half up (common practice, no source).
        rounded = Decimal(mpmath.nstr(want, 40, strip_zeros=False)).quantize(Decimal("0.01"), rounding=decimal.ROUND_HALF_UP)
        rep.check(name, "APR to two decimals", Decimal(c["apr_percent"]) == rounded, f"{c['apr_percent']} against {rounded}")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--base-url", default="http://127.0.0.1:18531")
    ap.add_argument("--only", default="", help="run only cases whose name contains this text")
    args = ap.parse_args()
    rep = Report()
    for case in CASES:
        if args.only in case.name:
            try:
                check_recurrence(args.base_url, case, rep)
            except Exception as e:  # noqa: BLE001 - a crash in one case is one failure
                rep.check(case.name, "cross-check ran", False, f"{type(e).__name__}: {e}")
    for cases, checker in [(LOAN_CASES, check_loan), (APR_CASES, check_apr)]:
        for name, body in cases:
            if args.only in name:
                try:
                    checker(args.base_url, name, body, rep)
                except Exception as e:  # noqa: BLE001
                    rep.check(name, "cross-check ran", False, f"{type(e).__name__}: {e}")
    for case in SAVINGS_CASES:
        if args.only in case.name:
            try:
                check_savings(args.base_url, case, rep)
            except Exception as e:  # noqa: BLE001 - a crash in one case is one failure
                rep.check(case.name, "cross-check ran", False, f"{type(e).__name__}: {e}")
    print(f"crosscheck: {rep.passed} passed, {rep.failed} failed")
    return 1 if rep.failed else 0


if __name__ == "__main__":
    sys.exit(main())
