#!/usr/bin/env bash
# Two builds of the server, one after the other, ROUNDS times: /healthz and
# distinct 360-payment JSON schedules (scripts/distinct-schedules.lua: every
# request a different loan, each one computed) in the same minutes, each with
# its request rate, the ratio of the two, and the server's CPU time a request
# (user + system, from /proc). The machine's speed drifts by tens of percent
# within an hour, so builds are compared in the same minutes.
#
#   bash scripts/ab-schedule.sh path/to/before/residue path/to/after/residue
#
# Needs wrk. Not part of CI: it measures. ROUNDS (default 3), SECONDS_EACH
# (default 4), CONNECTIONS (default 16, both runs).
set -euo pipefail
cd "$(dirname "$0")/.."
before="$1"
after="$2"
rounds="${ROUNDS:-3}"
seconds="${SECONDS_EACH:-4}"
connections="${CONNECTIONS:-16}"
command -v wrk >/dev/null || { echo "ab-schedule: wrk is missing (apt-get install -y wrk)" >&2; exit 2; }
work="$(mktemp -d -t residue-ab.XXXXXX)"
trap 'rm -rf "$work"' EXIT
ticks="$(getconf CLK_TCK)"

# One wrk run; prints "rate cpu_us_a_request".
measure() {
    local pid="$1" out="$2"
    shift 2
    local t0 t1
    t0="$(awk '{print $14 + $15}' "/proc/$pid/stat")"
    wrk -t2 -c"$connections" -d"${seconds}s" "$@" >"$out"
    t1="$(awk '{print $14 + $15}' "/proc/$pid/stat")"
    awk -v c="$((t1 - t0))" -v hz="$ticks" '
        /requests in/ {n = $1}
        /Requests\/sec/ {r = $2}
        /Non-2xx/ {bad = $5}
        END {if (bad > 0) {print "ab-schedule: " bad " answers were not 200" > "/dev/stderr"}
             printf "%.0f %.1f\n", r, c / hz * 1e6 / n}' "$out"
}

run() {
    local label="$1" binary="$2" addr="127.0.0.1:$3"
    RESIDUE_LOG=warn "$binary" --addr "$addr" >/dev/null 2>&1 &
    local pid=$!
    for _ in $(seq 1 50); do curl -fs "http://$addr/healthz" >/dev/null 2>&1 && break; sleep 0.1; done
    local h s
    h="$(measure "$pid" "$work/h.txt" "http://$addr/healthz")"
    s="$(measure "$pid" "$work/s.txt" -s scripts/distinct-schedules.lua "http://$addr")"
    awk -v l="$label" -v h="$h" -v s="$s" 'BEGIN {
        split(h, a, " "); split(s, b, " ");
        printf "%-7s /healthz %6.0f/s (%5.1f µs CPU each); distinct schedules %6.0f/s (%6.1f µs CPU each): %.1f %%\n",
            l, a[1], a[2], b[1], b[2], 100 * b[1] / a[1]}'
    kill "$pid"
    wait "$pid" 2>/dev/null || true
}

for _ in $(seq 1 "$rounds"); do
    run before "$before" 18743
    run after "$after" 18744
done
