#!/usr/bin/env python3
"""The answer corpus: several hundred JSON, CSV and NDJSON requests whose answers
are recorded byte for byte, so that a change meant to move code (not behaviour)
can be shown to leave every answer as it was.

    python3 tests/corpus/corpus.py record BINARY   # writes tests/corpus/answers.tsv
    python3 tests/corpus/corpus.py check BINARY    # compares, lists any difference

Each line of answers.tsv: the request's key, the status, the media type, and the
SHA-256 of the body. The requests are generated here, deterministically: valid
loans, plans, checks, comparisons, APRs, APYs, savings plans, recurrences and
batches, and a range of bad inputs whose problem details must not change either.
An answer changed on purpose is recorded again, and the commit says why.
"""

import hashlib
import http.client
import json
import os
import socket
import subprocess
import sys
import time
import urllib.parse

HERE = os.path.dirname(os.path.abspath(__file__))
ANSWERS = os.path.join(HERE, "answers.tsv")


def requests():
    """(key, method, path, media type of the body or None, body bytes or None)."""
    out = []

    def get(path, **q):
        query = urllib.parse.urlencode(q)
        target = f"{path}?{query}" if query else path
        out.append((f"GET {target}", "GET", target, None, None))

    def post(path, body, media="application/json"):
        raw = body if isinstance(body, bytes) else json.dumps(body, separators=(",", ":")).encode()
        out.append((f"POST {path} {raw.decode('utf-8', 'replace')}", "POST", path, media, raw))

    S = "/api/v1/loans/schedule"
    # Level loans over several principals, rates, terms and frequencies.
    for principal in ["250000", "14750", "1000000", "999.99"]:
        for rate in ["7.125", "0", "3.5", "12.75"]:
            for term in ["360", "60", "180"]:
                get(S, principal=principal, annual_rate_percent=rate, term_months=term)
    for freq in ["annual", "semiannual", "quarterly", "semimonthly", "biweekly", "weekly"]:
        get(S, principal="48000", annual_rate_percent="6.2", term_months="120", payment_frequency=freq)
        get(S + ".csv", principal="48000", annual_rate_percent="6.2", term_months="120", payment_frequency=freq)
    for comp in ["semiannual", "daily", "annual"]:
        get(S, principal="320000", annual_rate_percent="5.49", term_months="300", compounding=comp)
    for cur in ["EUR", "JPY", "GBP", "KWD", "CAD"]:
        get(S, principal="5000000" if cur == "JPY" else "80000", annual_rate_percent="4.1",
            term_months="240", currency=cur)
    get(S, principal="20000", annual_rate_percent="9", payment="500")
    get(S, principal="20000", annual_rate_percent="9", term_payments="48", payment_rounding="up")
    get(S, principal="20000", annual_rate_percent="9", term_payments="48", interest_rounding="half_even")
    # Plans: dates, odd days, extras, interest-only, balloons, rate changes.
    for dc in ["actual_365", "actual_360", "thirty_360", "thirty_360_us", "thirty_e_360", "thirty_360_bond_basis"]:
        get(S, principal="27500", annual_rate_percent="7.4", term_months="72",
            funding_date="2027-01-17", first_payment_date="2027-03-01", day_count=dc)
    for odd in ["add_to_first_payment", "prepaid", "ignore"]:
        get(S, principal="27500", annual_rate_percent="7.4", term_months="72",
            funding_date="2027-01-17", first_payment_date="2027-03-01", odd_days_interest=odd)
    for extra in ["150@13-", "200@1-60", "5000@24", "100@1-/12", "1000@2028-06-01", "150@13-,5000@60"]:
        get(S, principal="250000", annual_rate_percent="7.125", term_months="360",
            first_payment_date="2027-02-01", extra_payments=extra)
        get(S + ".csv", principal="250000", annual_rate_percent="7.125", term_months="360",
            first_payment_date="2027-02-01", extra_payments=extra)
    for io in ["12", "60", "120"]:
        get(S, principal="400000", annual_rate_percent="6.5", term_months="360", interest_only_payments=io)
    for b in ["60", "84"]:
        get(S, principal="180000", annual_rate_percent="8.25", term_months="360", balloon_after_payments=b)
    for rc in ["61:8.5", "13:5,25:6,37:7", "61:8.5,121:9.25"]:
        for keeps in ["term", "payment"]:
            get(S, principal="300000", annual_rate_percent="5.75", term_months="360",
                rate_changes=rc, rate_change_keeps=keeps)
    get(S, principal="300000", annual_rate_percent="6.1", term_months="360", property_value="400000",
        first_payment_date="2027-05-01", label="Harbourside flat")
    post(S, {"principal": "250000", "annual_rate_percent": "7.125", "term_months": 360,
             "extra_payments": [{"amount": "150", "from": 13}]})
    post(S, {"principal": "250000", "annual_rate_percent": "7.125", "term_months": 360,
             "extra_payments": [{"amount": "150", "from": 13, "to": 120, "every": 3},
                                {"amount": "2500", "date": "2030-01-01"}],
             "first_payment_date": "2027-02-01"})
    post(S, {"principal": "300000", "annual_rate_percent": "5.75", "term_months": 360,
             "rate_changes": [{"from_payment": 61, "annual_rate_percent": "8"}]})
    post(S, {"principal": 52000, "annual_rate_percent": 4.25, "term_months": 84})
    # Comparisons.
    C = "/api/v1/loans/compare"
    for terms in ["180,240,360", "120,360", "60,72,84"]:
        get(C, principal="278000", annual_rate_percent="6.375", term_months=terms)
        get(C + ".csv", principal="278000", annual_rate_percent="6.375", term_months=terms)
    get(C, principal="278000", annual_rate_percent="6.375,6.875,7.25", term_months="360")
    post(C, {"base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360},
             "variants": [{"label": "20 years", "term_months": 240},
                          {"label": "extra 150", "extra_payments": [{"amount": "150", "from": 1}]}]})
    # Checks.
    K = "/api/v1/loans/check"
    for quoted in ["1684.30", "1684.31", "1690", "1600"]:
        for apr in ["7.25", "7.3", "7.5", "7.125"]:
            get(K, principal="250000", annual_rate_percent="7.125", term_months="360",
                quoted_payment=quoted, quoted_apr_percent=apr, prepaid_finance_charges="origination:2500")
    get(K, principal="300000", annual_rate_percent="6.875", term_months="360", quoted_payment="1970.79",
        quoted_apr_percent="7.05", prepaid_finance_charges="origination:3000,points:1500")
    get(K, principal="300000", annual_rate_percent="6.875", term_months="360", quoted_payment="1970.79",
        quoted_apr_percent="7.05", quoted_finance_charge="412000", mortgage="true")
    get(K, principal="18000", annual_rate_percent="9.9", term_months="60", quoted_payment="381.55",
        quoted_apr_percent="10.4", prepaid_finance_charges="fee:350", funding_date="2027-01-10",
        first_payment_date="2027-03-01")
    post(K, {"principal": "300000", "annual_rate_percent": "6.875", "term_months": 360,
             "quoted_payment": "1970.79", "quoted_apr_percent": "7.05",
             "prepaid_finance_charges": [{"name": "origination", "amount": "3000"}]})
    # APR (Appendix J shapes) and APY.
    A = "/api/v1/apr"
    get(A, advance="5000@1978-01-10", payment="230x24@1978-02-10/monthly")
    get(A, unit_period="month", advance="6000@0", payment="200x36@1+19/30")
    get(A, advance="1000@2027-01-01", payment="90x12@2027-02-01/monthly", method="eu_aprc")
    for t in ["auto", "days", "weeks", "equal_months"]:
        get(A, advance="1000@2027-01-01", payment="90x12@2027-02-01/monthly", method="eu_aprc", time_basis=t)
    for n in ["12", "24", "36", "48"]:
        get(A, advance="10000@2027-01-15", payment=f"{n}0x{n}@2027-02-15/monthly")
    Y = "/api/v1/apy"
    for rate in ["5", "4.25", "0.5", "12"]:
        for comp in ["daily", "monthly", "quarterly", "annual"]:
            get(Y, annual_rate_percent=rate, compounding=comp)
    get(Y, principal="1000", interest="30.37", days="182")
    get(Y, principal="2500", interest="100", days="365")
    # Savings plans.
    P = "/api/v1/savings/plan"
    for dep in ["300", "50", "1250"]:
        for rate in ["4", "0", "6.5"]:
            get(P, deposit=dep, annual_rate_percent=rate, term_months="120")
    get(P + ".csv", opening_balance="1000", deposit="250", deposit_growth_percent="3",
        annual_rate_percent="4.5", goal="50000")
    get(P, opening_balance="1000", deposit="250", deposit_growth_percent="3", annual_rate_percent="4.5",
        goal="50000")
    get(P, opening_balance="400000", withdrawal="2500", annual_rate_percent="5", term_months="240")
    get(P, opening_balance="400000", annual_rate_percent="5", term_months="240", goal="0")
    get(P, deposit="100", deposit_step="10", annual_rate_percent="3", term_months="60")
    get(P, deposit="100", annual_rate_percent="3", term_months="60", deposit_timing="start")
    get(P, deposit="100", annual_rate_percent="3", term_periods="26", deposit_frequency="biweekly",
        start_date="2027-01-04")
    get(P, annual_rate_percent="4", goal="25000", term_months="60")
    # Recurrences.
    R = "/api/v1/recurrence"
    post(R, {"a": "1.005", "x0": "100000", "inputs": [{"kind": "step", "amount": "-599.55"}],
             "evaluate_at": [0, 12, 360]})
    post(R, {"a": "1.004", "x0": "0", "inputs": [{"kind": "ramp", "amount": "10"}], "evaluate_at": [1, 60]})
    post(R, {"a": "1.01", "x0": "500", "inputs": [{"kind": "geometric", "amount": "20", "ratio": "1.01"}],
             "evaluate_at": [5, 50]})
    post(R, {"a": "1", "x0": "0", "inputs": [{"kind": "impulse", "amount": "100", "at": 3}],
             "evaluate_at": [0, 3, 10]})
    # Batches.
    jobs = [
        {"id": 1, "job": "loan_check", "request": {"principal": "246113", "annual_rate_percent": "6.7", "term_months": 360}},
        {"id": 2, "job": "apy", "request": {"annual_rate_percent": "5", "compounding": "daily"}},
        {"id": 3, "job": "loan_check", "request": {"principal": "x"}},
        {"id": 4, "job": "nope", "request": {}},
    ]
    post("/api/v1/batch", b"".join(json.dumps(j).encode() + b"\n" for j in jobs), "application/x-ndjson")
    # Bad input: the problem details must not change either.
    get(S)
    get(S, principal="six", annual_rate_percent="x", term_months="-1")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", payment="100")
    get(S, principal="250000", annual_rate_percent="7")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", colour="blue")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", currency="XXX")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", payment_frequency="daily")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", day_count="banker")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", extra_payments="150")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", extra_payments="150@x")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", rate_changes="61")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", funding_date="2027-02-30")
    get(S, principal="250000", annual_rate_percent="7", term_months="7000")
    get(S, principal="1e40", annual_rate_percent="7", term_months="360")
    get(S, principal="250000.001", annual_rate_percent="7", term_months="360")
    get(S, principal="250000", annual_rate_percent="700", term_months="360")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", label="a\u0007b")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", balloon_after_payments="400")
    get(S, principal="250000", annual_rate_percent="7", term_months="360", interest_only_payments="360")
    get(S, principal="250000", annual_rate_percent="7", payment="10")
    post(S, b"{", "application/json")
    post(S, b'{"principal":"1","principal":"2"}', "application/json")
    post(S, {"principal": [], "annual_rate_percent": {}, "term_months": "x"})
    post(S, {"principal": "250000", "annual_rate_percent": "7", "term_months": 360,
             "extra_payments": [{"amount": "x", "from": -1}]})
    post(S, b"principal=1", "application/x-www-form-urlencoded")
    get(C, principal="278000", annual_rate_percent="6.375")
    get(C, principal="278000", annual_rate_percent="6.375", term_months="1,2,3,4,5,6,7,8,9")
    post(C, {"base": {}, "variants": []})
    get(K, principal="250000", annual_rate_percent="7.125", term_months="360")
    get(K, principal="250000", annual_rate_percent="7.125", term_months="360", quoted_payment="abc",
        prepaid_finance_charges="origination")
    get(A)
    get(A, advance="5000@1978-01-10", payment="230x24")
    get(A, advance="1000@2027-01-01", payment="90x12@2027-02-01/monthly", time_basis="days")
    get(Y)
    get(Y, annual_rate_percent="5", compounding="hourly")
    get(P)
    get(P, deposit="300", annual_rate_percent="4")
    get(P, deposit="300", annual_rate_percent="4", term_months="120", goal="1000")
    get(P, deposit="-5", annual_rate_percent="abc", term_months="0")
    post(R, {"a": "x"})
    post(R, {"a": "1.005", "x0": "1", "inputs": [{"kind": "wave"}], "evaluate_at": [1]})
    get("/api/v1/nowhere")
    return out


def start(binary):
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    proc = subprocess.Popen([binary, "--addr", f"127.0.0.1:{port}"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    for _ in range(200):
        try:
            c = http.client.HTTPConnection("127.0.0.1", port, timeout=2)
            c.request("GET", "/healthz")
            c.getresponse().read()
            return proc, port
        except OSError:
            time.sleep(0.05)
    proc.kill()
    sys.exit(f"{binary} did not start")


def answers(binary):
    proc, port = start(binary)
    got = {}
    try:
        c = http.client.HTTPConnection("127.0.0.1", port, timeout=60)
        for key, method, path, media, body in requests():
            headers = {"Accept": "*/*"}
            if media:
                headers["Content-Type"] = media
            for attempt in range(2):
                try:
                    c.request(method, path, body=body, headers=headers)
                    r = c.getresponse()
                    data = r.read()
                    break
                except (ConnectionError, http.client.HTTPException):
                    # The server may close a kept-alive connection between two
                    # requests; ask again on a fresh one.
                    c.close()
                    c = http.client.HTTPConnection("127.0.0.1", port, timeout=60)
                    if attempt:
                        raise
            if r.getheader("connection", "").lower() == "close":
                c.close()
                c = http.client.HTTPConnection("127.0.0.1", port, timeout=60)
            got[key] = (str(r.status), r.getheader("content-type", ""), hashlib.sha256(data).hexdigest())
    finally:
        proc.terminate()
        proc.wait()
    return got


def clean(key):
    return key.replace("\t", " ").replace("\n", " ")


def main():
    if len(sys.argv) != 3 or sys.argv[1] not in ("record", "check"):
        sys.exit(__doc__)
    mode, binary = sys.argv[1], sys.argv[2]
    keys = [clean(k) for k, *_ in requests()]
    assert len(set(keys)) == len(keys), "two corpus requests share a key"
    got = {clean(k): v for k, v in answers(binary).items()}
    if mode == "record":
        with open(ANSWERS, "w", encoding="utf-8") as f:
            for k in keys:
                f.write("\t".join([k, *got[k]]) + "\n")
        print(f"recorded {len(keys)} answers in {ANSWERS}")
        return
    want = {}
    with open(ANSWERS, encoding="utf-8") as f:
        for line in f:
            k, status, media, digest = line.rstrip("\n").split("\t")
            want[k] = (status, media, digest)
    differ = [k for k in want if got.get(k) != want[k]]
    missing = [k for k in keys if k not in want]
    for k in differ:
        print(f"DIFFERS {k}\n  recorded {want[k]}\n  now      {got.get(k)}")
    for k in missing:
        print(f"NOT RECORDED {k}")
    print(f"corpus: {len(want)} recorded answers, {len(want) - len(differ)} the same, "
          f"{len(differ)} differ, {len(missing)} not recorded")
    sys.exit(1 if differ or missing else 0)


if __name__ == "__main__":
    main()
