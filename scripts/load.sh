#!/usr/bin/env bash
# Load figures for the README, against the release build on 127.0.0.1.
#
#   bash scripts/load.sh [path/to/release/residue]
#
# Needs wrk (`apt-get install -y wrk`), GNU time and curl. Not part of CI: it measures.
# Each wrk run lasts LOAD_DURATION (default 10s) with 2 threads. It prints:
#   1. /healthz and the 360-payment JSON schedule in the same run: both request
#      rates and their ratio;
#   2. a batch of BATCH_LINES (default 20000) level-payment loan checks (payment
#      and APR) posted as NDJSON with curl --data-binary: lines per second;
#   2b. the same number of loans as a CSV file of quotes posted to
#      /api/v1/loans/checks: the time to the last verdict;
#   3. the saturating concurrency of the schedule (short sweep), then an overload
#      run at three times it: the count of each status (only 200 and 503 with
#      Retry-After are expected), wrk's p99 latency, and the server's resident
#      memory (VmRSS sampled during the run, and VmHWM, the peak).
set -euo pipefail
cd "$(dirname "$0")/.."

binary="${1:-target/release/residue}"
duration="${LOAD_DURATION:-10s}"
batch_lines="${BATCH_LINES:-20000}"
addr="${LOAD_ADDR:-127.0.0.1:18700}"
base="http://$addr"
schedule="$base/api/v1/loans/schedule?principal=100000&annual_rate_percent=6&term_months=360"

command -v wrk >/dev/null || { echo "load: wrk is missing (apt-get install -y wrk)" >&2; exit 2; }
/usr/bin/env time -f "" true 2>/dev/null || { echo "load: GNU time is missing (apt-get install -y time)" >&2; exit 2; }
if [[ ! -x "$binary" ]]; then
    echo "load: building the release binary" >&2
    cargo build --release --bin residue
    binary=target/release/residue
fi

work="$(mktemp -d -t residue-load.XXXXXX)"
server_pid=""
cleanup() {
    if [[ -n "$server_pid" ]] && kill -0 "$server_pid" 2>/dev/null; then
        kill "$server_pid" 2>/dev/null || true
        wait "$server_pid" 2>/dev/null || true
    fi
    rm -rf "$work"
}
trap cleanup EXIT

RESIDUE_LOG=warn "$binary" --addr "$addr" >"$work/server.log" 2>&1 &
server_pid=$!
for _ in $(seq 1 100); do
    curl -fs "$base/healthz" >/dev/null 2>&1 && break
    sleep 0.1
done
curl -fs "$base/healthz" >/dev/null || { echo "load: the server did not start" >&2; cat "$work/server.log" >&2; exit 1; }
echo "server: $binary on $addr (pid $server_pid), $(nproc) cores"

rate() { awk '/^Requests\/sec:/ {print $2}' "$1"; }

# 1. /healthz against the 360-payment schedule, one after the other in the same run.
# Each run also accounts the CPU time the server and wrk spent (both share the
# machine's cores): microseconds of each a request.
server_cpu() { awk '{print $14 + $15}' "/proc/$server_pid/stat"; }
ticks="$(getconf CLK_TCK)"
measured() { # name, then wrk's arguments
    local name="$1" before after
    shift
    before="$(server_cpu)"
    /usr/bin/env time -f "%U %S" -o "$work/$name.cpu" wrk "$@" >"$work/$name.txt"
    after="$(server_cpu)"
    echo "$((after - before))" >"$work/$name.server"
}
measured healthz -t2 -c32 -d"$duration" --latency "$base/healthz"
measured schedule -t2 -c32 -d"$duration" --latency "$schedule"
# Every request a different loan (the principal changes by cents): none is
# served from the answer store, each one is computed. Answered at most
# max_in_flight at once; the rest get 503 (counted apart).
store_hits() { curl -fs "$base/metrics" | awk '/^residue_answer_cache_hits_total/ {print $2}'; }
hits_before="$(store_hits)"
measured distinct -t2 -c16 -d"$duration" -s scripts/distinct-schedules.lua "$base" -- 0
hits_after="$(store_hits)"
if ((hits_after > hits_before)); then
    echo "load: WARNING: $((hits_after - hits_before)) distinct schedules came from the answer store: the distinct rate below is not a computed rate" >&2
fi
h="$(rate "$work/healthz.txt")"
s="$(rate "$work/schedule.txt")"
u="$(rate "$work/distinct.txt")"
refused="$(awk '/Non-2xx/ {print $5}' "$work/distinct.txt")"
echo
echo "== request rates (wrk -t2 -c32 -d$duration) =="
echo "GET /healthz:                     $h requests/s"
echo "GET 360-payment JSON schedule:    $s requests/s (the same URL again and again: after the first, from the answer store)"
echo "GET distinct 360-payment schedules: $u requests/s at 16 connections (${refused:-0} answered 503; $((hits_after - hits_before)) served from the answer store, the rest computed)"
awk -v h="$h" -v s="$s" 'BEGIN {printf "schedule / healthz:               %.1f %%\n", 100 * s / h}'
awk -v h="$h" -v u="$u" 'BEGIN {printf "distinct schedules / healthz:     %.1f %%\n", 100 * u / h}'
echo "CPU time a request (server + wrk, microseconds):"
for name in healthz schedule distinct; do
    n="$(awk '/requests in/ {print $1}' "$work/$name.txt")"
    awk -v name="$name" -v n="$n" -v t="$ticks" -v s="$(cat "$work/$name.server")" \
        -v w="$(cat "$work/$name.cpu")" 'BEGIN {split(w, c, " ");
        printf "  %-9s server %6.1f + wrk %5.1f\n", name, 1e6 * s / t / n, 1e6 * (c[1] + c[2]) / n}'
done

# 2. A batch of level-payment loan checks.
awk -v n="$batch_lines" -f scripts/check-batch.awk >"$work/batch.ndjson"
seconds="$(curl -s -o "$work/batch.out" -w '%{time_total}' -H 'Content-Type: application/x-ndjson' \
    --data-binary @"$work/batch.ndjson" "$base/api/v1/batch")"
answered="$(wc -l <"$work/batch.out")"
ok="$(grep -c '"ok":true' "$work/batch.out" || true)"
echo
echo "== batch (POST /api/v1/batch, $batch_lines loan_check lines, $(du -k "$work/batch.ndjson" | cut -f1) KiB) =="
echo "answered $answered lines ($ok ok) in $seconds s"
awk -v n="$answered" -v t="$seconds" 'BEGIN {printf "%.0f lines/s\n", n / t}'

# 2b. The same loans as a CSV file of quotes: POST /api/v1/loans/checks.
# The time to the last verdict of the CSV answer.
awk -v n="$batch_lines" 'BEGIN {
    print "id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent"
    for (i = 1; i <= n; i++) {
        p = 100000 + (i % 400) * 1000; r = 5 + (i % 80) / 40; m = r / 1200
        # The level payment in binary floating point, rounded to the cent: most
        # rows hold, a few differ by a cent where the float rounds the other way.
        printf "q%d,%d,%.3f,360,%.2f,%.3f\n", i, p, r, p * m / (1 - (1 + m) ^ -360), r
    }
}' >"$work/pipeline.csv"
seconds="$(curl -s -o "$work/pipeline.out" -w '%{time_total}' -H 'Expect:' -H 'Content-Type: text/csv' \
    --data-binary @"$work/pipeline.csv" "$base/api/v1/loans/checks")"
verdicts=$(( $(wc -l <"$work/pipeline.out") - 1 ))
echo
echo "== pipeline (POST /api/v1/loans/checks, $batch_lines CSV rows, $(du -k "$work/pipeline.csv" | cut -f1) KiB) =="
echo "answered $verdicts rows ($(grep -c ',ok,' "$work/pipeline.out" || true) ok) in $seconds s"
awk -v n="$verdicts" -v t="$seconds" 'BEGIN {printf "%.0f rows/s\n", n / t}'
# The first verdict as the page asks for it (NDJSON): the time from the last
# byte of the upload sent to the first verdict's bytes received.
python3 - "$addr" "$work/pipeline.csv" <<'PY'
import socket, sys, time
host, port = sys.argv[1].rsplit(":", 1)
body = open(sys.argv[2], "rb").read()
head = (f"POST /api/v1/loans/checks HTTP/1.1\r\nHost: {sys.argv[1]}\r\nContent-Type: text/csv\r\n"
        f"Accept: application/x-ndjson\r\nConnection: close\r\nContent-Length: {len(body)}\r\n\r\n").encode()
s = socket.create_connection((host, int(port)))
s.sendall(head + body)
sent = time.perf_counter()
got = b""
while b'"status"' not in got:
    more = s.recv(65536)
    if not more:
        break
    got += more
first = time.perf_counter()
while s.recv(1 << 20):
    pass
done = time.perf_counter()
print(f"first verdict {1000 * (first - sent):.1f} ms after the upload was sent; the last {1000 * (done - sent):.0f} ms")
PY

# 3. Saturation, then three times it.
echo
# The sweep and the overload ask for distinct schedules: each one is computed,
# none served from the answer store.
echo "== saturation sweep of distinct schedules (wrk -t2, 3 s each) =="
best=0
best_c=1
run=1
for c in 2 4 8 16 32; do
    # Each run of the sweep asks for loans of its own (the script's argument).
    wrk -t2 -c"$c" -d3s -s scripts/distinct-schedules.lua "$base" -- "$run" >"$work/sweep.txt"
    run=$((run + 1))
    r="$(rate "$work/sweep.txt")"
    echo "c=$c: $r requests/s"
    if awk -v r="$r" -v b="$best" 'BEGIN {exit !(r > 1.05 * b)}'; then
        best="$r"
        best_c="$c"
    fi
done
overload=$((3 * best_c))
[[ "$overload" -lt 2 ]] && overload=2
echo "saturating concurrency: $best_c ($best requests/s); overload at $overload"

cp scripts/distinct-schedules.lua "$work/count.lua"
cat >>"$work/count.lua" <<'EOF'
local start = init
function init(args)
    start(args)
    counts = {}
    no_retry_after = 0
end
function response(status, headers, body)
    counts[status] = (counts[status] or 0) + 1
    if status == 503 and headers["retry-after"] == nil and headers["Retry-After"] == nil then
        no_retry_after = no_retry_after + 1
    end
end
function done(summary, latency, requests)
    local total, missing = {}, 0
    for _, t in ipairs(threads) do
        for status, n in pairs(t:get("counts")) do
            total[status] = (total[status] or 0) + n
        end
        missing = missing + t:get("no_retry_after")
    end
    for status, n in pairs(total) do
        io.write(string.format("status %d: %d\n", status, n))
    end
    io.write(string.format("503 without Retry-After: %d\n", missing))
    io.write(string.format("socket errors: connect %d, read %d, write %d, timeout %d\n",
        summary.errors.connect, summary.errors.read, summary.errors.write, summary.errors.timeout))
    io.write(string.format("p50 %.2f ms, p99 %.2f ms, max %.2f ms\n",
        latency:percentile(50) / 1000, latency:percentile(99) / 1000, latency.max / 1000))
end
EOF
rss_max=0
(
    while kill -0 "$server_pid" 2>/dev/null; do
        awk '/^VmRSS:/ {print $2}' "/proc/$server_pid/status" 2>/dev/null || true
        sleep 0.25
    done
) >"$work/rss.txt" &
sampler=$!
wrk -t2 -c"$overload" -d"$duration" --latency -s "$work/count.lua" "$base" -- "$run" >"$work/overload.txt"
kill "$sampler" 2>/dev/null || true
wait "$sampler" 2>/dev/null || true
rss_max="$(sort -n "$work/rss.txt" | tail -1)"
hwm="$(awk '/^VmHWM:/ {print $2}' "/proc/$server_pid/status")"
echo
echo "== overload: wrk -t2 -c$overload -d$duration on the schedule =="
grep -E '^(status|503|socket|p50)' "$work/overload.txt"
awk '/^Requests\/sec:/ {print "answers/s: " $2}' "$work/overload.txt"
awk -v r="$rss_max" -v h="$hwm" 'BEGIN {printf "server RSS: %.1f MB at most during the run (VmHWM %.1f MB)\n", r / 1024, h / 1024}'
