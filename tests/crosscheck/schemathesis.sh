#!/usr/bin/env bash
# Property-based API test generated from Residue's own OpenAPI document.
#
#   bash tests/crosscheck/schemathesis.sh http://127.0.0.1:18531
#
# The server must be running (tests/crosscheck/run.sh starts it and calls this).
# Schemathesis (pinned in requirements.txt) reads /api/openapi.json, generates
# requests for every operation (valid and invalid data, from the schemas and
# the examples), and checks that no answer is a 5xx (not_a_server_error) and
# that every 4xx is problem details (problem_details_for_4xx, in
# schemathesis_hooks.py). Bounded: a few examples an operation, a time budget
# for the whole run (SCHEMATHESIS_MAX_TIME, default 180 s) and a timeout for
# each request.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
cd "$root"

base="${1:-http://127.0.0.1:18531}"
pin="$(grep -E '^schemathesis==' tests/crosscheck/requirements.txt)"
if ! .venv/bin/python -c 'import schemathesis' 2>/dev/null; then
    echo "schemathesis: installing $pin into .venv" >&2
    .venv/bin/pip install -q "$pin"
fi

report="$(mktemp -d -t residue-schemathesis.XXXXXX)"
trap 'rm -rf "$report"' EXIT

status=0
# Run from the temporary directory: schemathesis keeps a cache (.schemathesis/) in
# its working directory, which must not land in the repository.
cd "$report"
SCHEMATHESIS_HOOKS=schemathesis_hooks PYTHONPATH="$here${PYTHONPATH:+:$PYTHONPATH}" \
    timeout 280 "$root/.venv/bin/schemathesis" --no-color run "$base/api/openapi.json" \
    --url "$base" \
    --checks not_a_server_error,problem_details_for_4xx \
    --mode all \
    --max-examples "${SCHEMATHESIS_MAX_EXAMPLES:-25}" \
    --max-time "${SCHEMATHESIS_MAX_TIME:-180}" \
    --request-timeout 15 \
    --seed "${SCHEMATHESIS_SEED:-20270301}" \
    --generation-database none \
    --report-dir "$report" \
    || status=$?
if [[ "$status" -eq 0 ]]; then
    echo "schemathesis: 1 passed, 0 failed"
else
    echo "schemathesis: 0 passed, 1 failed (exit $status)"
fi
exit "$status"
