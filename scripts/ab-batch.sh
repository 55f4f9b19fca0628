#!/usr/bin/env bash
# Two builds of the server on the same batch of checks, one after the other,
# ROUNDS times: lines a second and the server's CPU time a line (user + system,
# from /proc). The machine's speed drifts by tens of percent within an hour, so
# builds are compared in the same minutes, never against figures of another day.
#
#   bash scripts/ab-batch.sh path/to/before/residue path/to/after/residue
#
# Not part of CI: it measures. BATCH_LINES (default 20000), ROUNDS (default 2),
# ADJUSTABLE=1 for adjustable-rate loans.
set -euo pipefail
cd "$(dirname "$0")/.."
before="$1"
after="$2"
lines="${BATCH_LINES:-20000}"
rounds="${ROUNDS:-2}"
work="$(mktemp -d -t residue-ab.XXXXXX)"
trap 'rm -rf "$work"' EXIT
awk -v n="$lines" -v adjustable="${ADJUSTABLE:-0}" -f scripts/check-batch.awk >"$work/batch.ndjson"
ticks="$(getconf CLK_TCK)"

run() {
    local label="$1" binary="$2" addr="127.0.0.1:$3"
    RESIDUE_LOG=warn "$binary" --addr "$addr" >/dev/null 2>&1 &
    local pid=$!
    for _ in $(seq 1 50); do curl -fs "http://$addr/healthz" >/dev/null 2>&1 && break; sleep 0.1; done
    for _ in 1 2 3; do
        local t0 t1 seconds
        t0="$(awk '{print $14 + $15}' "/proc/$pid/stat")"
        seconds="$(curl -s -o "$work/out" -w '%{time_total}' -H 'Content-Type: application/x-ndjson' \
            --data-binary @"$work/batch.ndjson" "http://$addr/api/v1/batch")"
        t1="$(awk '{print $14 + $15}' "/proc/$pid/stat")"
        awk -v l="$label" -v n="$(grep -c '"ok":true' "$work/out")" -v s="$seconds" -v c="$((t1 - t0))" -v hz="$ticks" \
            'BEGIN {printf "%-7s %d lines ok in %.3f s: %6.0f lines/s, server CPU %.1f µs a line\n", l, n, s, n / s, c / hz * 1e6 / n}'
    done
    kill "$pid"
    wait "$pid" 2>/dev/null || true
}

for _ in $(seq 1 "$rounds"); do
    run before "$before" 18741
    run after "$after" 18742
done
