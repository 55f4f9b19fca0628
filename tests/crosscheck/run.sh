#!/usr/bin/env bash
# Cross-checks a Residue server binary against sympy/scipy/QuantLib/numpy-financial references.
#
#   bash tests/crosscheck/run.sh target/debug/residue
#
# Creates .venv at the repo root if it is missing (pinned requirements), starts
# the server on 127.0.0.1:18531, waits for GET /healthz to answer 200 (up to
# 30 s), runs crosscheck.py, csv_roundtrip.py, pipeline.py, spreadsheet.sh,
# conventions.py, choices.py, adjustable.py and schemathesis.sh, stops the
# server and exits 1 if any of them failed.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
cd "$root"

if [[ $# -lt 1 ]]; then
    echo "usage: $0 path/to/residue-binary" >&2
    exit 2
fi
binary="$1"
shift
if [[ ! -x "$binary" ]]; then
    echo "crosscheck: $binary is not an executable" >&2
    exit 2
fi

addr="${CROSSCHECK_ADDR:-127.0.0.1:18531}"
base="http://$addr"

if [[ ! -x .venv/bin/python ]]; then
    echo "crosscheck: creating .venv" >&2
    python3 -m venv .venv
    .venv/bin/pip install -q -r tests/crosscheck/requirements.txt
fi

log="$(mktemp -t residue-crosscheck.XXXXXX.log)"
server_pid=""
cleanup() {
    if [[ -n "$server_pid" ]] && kill -0 "$server_pid" 2>/dev/null; then
        kill "$server_pid" 2>/dev/null || true
        wait "$server_pid" 2>/dev/null || true
    fi
    rm -f "$log"
}
trap cleanup EXIT

RESIDUE_ADDR="$addr" "$binary" --addr "$addr" >"$log" 2>&1 &
server_pid=$!

healthy=""
for _ in $(seq 1 60); do
    if ! kill -0 "$server_pid" 2>/dev/null; then
        echo "crosscheck: the server exited before answering; its output:" >&2
        cat "$log" >&2
        exit 1
    fi
    code="$(.venv/bin/python - "$base/healthz" <<'EOF' 2>/dev/null || true
import sys, urllib.request
try:
    with urllib.request.urlopen(sys.argv[1], timeout=2) as r:
        print(r.status)
except Exception:
    print(0)
EOF
)"
    if [[ "$code" == "200" ]]; then
        healthy=1
        break
    fi
    sleep 0.5
done
if [[ -z "$healthy" ]]; then
    echo "crosscheck: GET $base/healthz did not answer 200 within 30 s; server output:" >&2
    cat "$log" >&2
    exit 1
fi

status=0
.venv/bin/python tests/crosscheck/crosscheck.py --base-url "$base" "$@" || status=$?
# The CSV answers read back with Python's csv module, figure by figure against the JSON.
.venv/bin/python tests/crosscheck/csv_roundtrip.py --base-url "$base" || status=1
# POST /api/v1/loans/checks: a 20,000-row CSV of quotes with planted defects against an
# exact-fraction reference, a sample against the single check, and the edge files.
.venv/bin/python tests/crosscheck/pipeline.py "$base" || status=1
# Its CSV answer imported by a headless spreadsheet (gnumeric's ssconvert): figures are numbers.
bash tests/crosscheck/spreadsheet.sh "$base" || status=1
# Due dates and odd days against QuantLib, payments and balances against numpy-financial.
.venv/bin/python tests/crosscheck/conventions.py --base-url "$base" || status=1
# The payment grid against numpy-financial and 7 CFR 1942.19's factors; rate-and-points options
# and refinancing against an exact-fraction posted ledger (break-evens, horizons, refusals).
.venv/bin/python tests/crosscheck/choices.py --base-url "$base" || status=1
# Adjustable-rate loans: every path's posted ledger against an exact-fraction reference, the paths'
# order and bounds, numpy-financial at each change, Regulation Z's four examples, the three syntaxes.
.venv/bin/python tests/crosscheck/adjustable.py --base-url "$base" || status=1
# Property-based test generated from /api/openapi.json: no 5xx, every 4xx is problem details.
bash tests/crosscheck/schemathesis.sh "$base" || status=1
exit "$status"
