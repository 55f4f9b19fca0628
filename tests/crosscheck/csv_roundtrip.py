#!/usr/bin/env python3
"""CSV round-trip: Residue's CSV answers read back with a general-purpose CSV
reader (Python's `csv` module) and compared, figure by figure, with the JSON
answer of the same request.

For each case the script fetches the JSON answer and the CSV answer (the
`.csv` URL, or `Accept: text/csv` on the JSON URL or a POST), parses the CSV
with `csv.DictReader` (RFC 4180: quoted fields, doubled quotes, CRLF), and
checks:

* the header row names exactly the columns expected, in order;
* every line ends with CRLF;
* one CSV row per JSON row, in the same order;
* every figure equals the JSON figure exactly, as text and as a Decimal
  (money and counts are plain decimals: no currency sign, no thousands
  separator, a "." decimal point, so a spreadsheet reads them as numbers);
* dates are ISO 8601 (`YYYY-MM-DD`) or empty where the JSON has null;
* labels survive quoting (a label with a comma and a quote).

Usage: python tests/crosscheck/csv_roundtrip.py --base-url http://127.0.0.1:18531
Prints one line per case and ends with `csv-roundtrip: N passed, M failed`;
exits 1 when any case fails. Standard library only.
"""

import argparse
import csv
import io
import json
import re
import sys
import urllib.parse
import urllib.request
from decimal import Decimal

PLAIN_NUMBER = re.compile(r"^-?[0-9]+(\.[0-9]+)?$")
ISO_DATE = re.compile(r"^[0-9]{4}-[0-9]{2}-[0-9]{2}$")

SCHEDULE_COLUMNS = ["number", "date", "payment", "extra", "interest", "principal", "balance"]
COMPARE_COLUMNS = [
    "label",
    "payment",
    "number_of_payments",
    "total_interest",
    "total_paid",
    "payoff_date",
    "interest_saved",
    "payments_saved",
]
SAVINGS_COLUMNS = ["number", "date", "deposit", "interest", "balance"]


class Mismatch(Exception):
    pass


def fetch(base, path, query=None, body=None, accept=None):
    url = base + path
    if query:
        url += "?" + urllib.parse.urlencode(query, doseq=True)
    headers = {}
    data = None
    if body is not None:
        data = json.dumps(body).encode()
        headers["Content-Type"] = "application/json"
    if accept:
        headers["Accept"] = accept
    req = urllib.request.Request(url, data=data, headers=headers, method="POST" if data else "GET")
    try:
        with urllib.request.urlopen(req, timeout=60) as r:
            return r.status, r.headers.get("Content-Type", ""), r.read()
    except urllib.error.HTTPError as e:
        return e.code, e.headers.get("Content-Type", ""), e.read()


def get_json(base, path, query=None, body=None):
    status, ctype, raw = fetch(base, path, query, body)
    if status != 200 or not ctype.startswith("application/json"):
        raise Mismatch(f"JSON {path}: {status} {ctype}: {raw[:300]!r}")
    return json.loads(raw)


def get_csv(base, path, query=None, body=None, accept=None):
    status, ctype, raw = fetch(base, path, query, body, accept)
    if status != 200 or not ctype.startswith("text/csv"):
        raise Mismatch(f"CSV {path}: {status} {ctype}: {raw[:300]!r}")
    text = raw.decode("utf-8")
    lines = text.split("\r\n")
    if lines[-1] != "":
        raise Mismatch("the CSV does not end with CRLF")
    if "\n" in text.replace("\r\n", ""):
        raise Mismatch("a line ends with a bare LF instead of CRLF")
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    rows = list(reader)
    return rows[0], rows[1:]


def same_figure(where, csv_value, json_value):
    if json_value is None:
        if csv_value != "":
            raise Mismatch(f"{where}: CSV {csv_value!r}, JSON null")
        return
    expected = str(json_value)
    if csv_value != expected:
        raise Mismatch(f"{where}: CSV {csv_value!r} != JSON {expected!r}")
    if not PLAIN_NUMBER.match(csv_value):
        raise Mismatch(f"{where}: {csv_value!r} is not a plain decimal number")
    if Decimal(csv_value) != Decimal(expected):
        raise Mismatch(f"{where}: {csv_value} != {expected} as decimals")


def same_date(where, csv_value, json_value):
    if json_value is None:
        if csv_value != "":
            raise Mismatch(f"{where}: CSV {csv_value!r}, JSON null")
        return
    if csv_value != json_value or not ISO_DATE.match(csv_value):
        raise Mismatch(f"{where}: CSV date {csv_value!r} != JSON {json_value!r}")


def compare_table(header, rows, expected_columns, json_rows, kinds):
    if header != expected_columns:
        raise Mismatch(f"header {header} != {expected_columns}")
    if len(rows) != len(json_rows):
        raise Mismatch(f"{len(rows)} CSV rows, {len(json_rows)} JSON rows")
    figures = 0
    for i, (row, j) in enumerate(zip(rows, json_rows)):
        if len(row) != len(header):
            raise Mismatch(f"row {i + 1} has {len(row)} fields")
        record = dict(zip(header, row))
        for column in header:
            where = f"row {i + 1} {column}"
            kind = kinds.get(column, "number")
            if kind == "date":
                same_date(where, record[column], j[column])
            elif kind == "text":
                if record[column] != j[column]:
                    raise Mismatch(f"{where}: {record[column]!r} != {j[column]!r}")
            else:
                same_figure(where, record[column], j[column])
            figures += 1
    return figures


def schedule_case(base, query, post=None):
    def run():
        if post is None:
            j = get_json(base, "/api/v1/loans/schedule", query)
            header, rows = get_csv(base, "/api/v1/loans/schedule.csv", query)
            # The JSON URL with Accept: text/csv gives the same CSV.
            h2, r2 = get_csv(base, "/api/v1/loans/schedule", query, accept="text/csv")
            if (h2, r2) != (header, rows):
                raise Mismatch("Accept: text/csv differs from the .csv URL")
        else:
            j = get_json(base, "/api/v1/loans/schedule", body=post)
            header, rows = get_csv(base, "/api/v1/loans/schedule", body=post, accept="text/csv")
        return compare_table(header, rows, SCHEDULE_COLUMNS, j["schedule"], {"date": "date"})

    return run


def compare_case(base, query=None, post=None):
    def run():
        if post is None:
            j = get_json(base, "/api/v1/loans/compare", query)
            header, rows = get_csv(base, "/api/v1/loans/compare.csv", query)
        else:
            j = get_json(base, "/api/v1/loans/compare", body=post)
            header, rows = get_csv(base, "/api/v1/loans/compare", body=post, accept="text/csv")
        return compare_table(
            header, rows, COMPARE_COLUMNS, j["rows"], {"label": "text", "payoff_date": "date"}
        )

    return run


def savings_case(base, query=None, post=None):
    def run():
        if post is None:
            j = get_json(base, "/api/v1/savings/plan", query)
            header, rows = get_csv(base, "/api/v1/savings/plan.csv", query)
        else:
            j = get_json(base, "/api/v1/savings/plan", body=post)
            header, rows = get_csv(base, "/api/v1/savings/plan", body=post, accept="text/csv")
        return compare_table(header, rows, SAVINGS_COLUMNS, j["schedule"], {"date": "date"})

    return run


def cases(base):
    yield "schedule 100000 at 6 % over 360 months", schedule_case(
        base, {"principal": "100000", "annual_rate_percent": "6", "term_months": "360"}
    )
    yield "schedule JPY (no minor units), biweekly", schedule_case(
        base,
        {
            "principal": "3500000",
            "annual_rate_percent": "1.5",
            "term_months": "60",
            "currency": "JPY",
            "payment_frequency": "biweekly",
        },
    )
    yield "schedule KWD (three decimals), quarterly", schedule_case(
        base,
        {
            "principal": "12500.125",
            "annual_rate_percent": "4.25",
            "term_months": "120",
            "currency": "KWD",
            "payment_frequency": "quarterly",
        },
    )
    yield "schedule with dates, odd days, extras and a rate change (POST)", schedule_case(
        base,
        None,
        post={
            "principal": "250000",
            "annual_rate_percent": "7.125",
            "term_months": 360,
            "funding_date": "2027-01-15",
            "first_payment_date": "2027-03-01",
            "extra_payments": [{"amount": "150", "from": 13}, {"amount": "5000", "at": 36}],
            "rate_changes": [{"at": 61, "annual_rate_percent": "7.25"}],
        },
    )
    yield "schedule with a balloon and interest-only payments", schedule_case(
        base,
        {
            "principal": "80000",
            "annual_rate_percent": "5.5",
            "term_months": "360",
            "interest_only_payments": "12",
            "balloon_after_payments": "84",
            "first_payment_date": "2027-01-31",
        },
    )
    yield "comparison of three terms (GET)", compare_case(
        base, {"principal": "278000", "annual_rate_percent": "6.375", "term_months": "180,240,360"}
    )
    yield "comparison with a quoted label (POST)", compare_case(
        base,
        post={
            "base": {
                "principal": "278000",
                "annual_rate_percent": "6.375",
                "term_months": 360,
                "first_payment_date": "2027-02-01",
                "label": 'base, "30 years"',
            },
            "variants": [
                {"label": "extra 200, monthly", "extra_payments": [{"amount": "200", "from": 1}]},
                {"label": "15 years", "term_months": 180},
            ],
        },
    )
    yield "savings: deposits to a final balance", savings_case(
        base, {"annual_rate_percent": "4", "deposit": "250", "term_months": "120", "start_date": "2027-01-01"}
    )
    yield "savings: the deposit for a goal (POST)", savings_case(
        base, post={"annual_rate_percent": "3.5", "goal": "25000", "term_months": 60}
    )
    yield "savings: a drawdown (negative deposits)", savings_case(
        base, {"annual_rate_percent": "5", "opening_balance": "200000", "withdrawal": "1500", "term_months": "240"}
    )


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--base-url", default="http://127.0.0.1:18531")
    args = parser.parse_args()
    base = args.base_url.rstrip("/")
    passed = failed = 0
    for name, run in cases(base):
        try:
            figures = run()
            print(f"ok    {name}: {figures} figures equal")
            passed += 1
        except Mismatch as e:
            print(f"FAIL  {name}: {e}")
            failed += 1
        except Exception as e:  # noqa: BLE001 - a failure of any kind fails the case
            print(f"FAIL  {name}: {type(e).__name__}: {e}")
            failed += 1
    print(f"csv-roundtrip: {passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
