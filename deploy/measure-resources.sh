#!/usr/bin/env bash
# Measures one replica's memory and CPU, for the Deployment's resources and for
# sizing replicas (docs/operating.md quotes its output). Not part of the tests.
#
# Usage: bash deploy/measure-resources.sh [residue binary]   (default target/release/residue)
# Environment: SECONDS_EACH (wrk seconds a phase, default 10).
#
# The server runs with its defaults (answer store 32 MB, 16 requests in flight) on
# a free loopback port. Resident memory is VmRSS from /proc/PID/status, sampled
# every 0.2 s (its peak within each phase is printed), and VmHWM, the process's
# peak so far; CPU is the server's user+system time from /proc/PID/stat over the
# phase's wall time, in cores. wrk and the server share this machine's cores.
# Phases:
#   idle       just started, then after one request of each kind
#   healthz    wrk -t2 -c16 GET /healthz
#   stored     wrk -t2 -c16, one 360-payment schedule again and again (answer store)
#   distinct   wrk -t2 -c16, every request a different 360-payment schedule,
#              each computed (fills the 32 MB answer store)
#   long       wrk -t2 -c16, every request a different 6,000-payment schedule
#              (about 740 KB each, on blocking threads holding in-flight permits)
#   batch      one batch of 100,000 loan_check lines (the most a batch may hold)
#   2 batches  two such batches at once (two may run at once)
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=${1:-target/release/residue}
EACH=${SECONDS_EACH:-10}
command -v wrk >/dev/null || { echo "wrk is missing: apt-get install -y wrk" >&2; exit 1; }
[ -x "$BIN" ] || { echo "no executable at $BIN" >&2; exit 1; }
WORK=$(mktemp -d)
PID=
cleanup() { [ -n "$PID" ] && kill "$PID" 2>/dev/null; rm -rf "$WORK"; }
trap cleanup EXIT
PORT=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])')
BASE=http://127.0.0.1:$PORT
RESIDUE_LOG=warn "$BIN" --addr "127.0.0.1:$PORT" >"$WORK/server.log" 2>&1 &
PID=$!
for _ in $(seq 100); do curl -sf -o /dev/null "$BASE/healthz" && break; sleep 0.05; done
TICKS=$(getconf CLK_TCK)

rss() { awk '/^VmRSS/ {print $2}' "/proc/$PID/status"; }
hwm() { awk '/^VmHWM/ {print $2}' "/proc/$PID/status"; }
cpu_ticks() { awk '{print $14 + $15}' "/proc/$PID/stat"; }
mb() { awk -v k="$1" 'BEGIN {printf "%.1f MB", k / 1024}'; }

# Runs "$@" while sampling VmRSS; prints the phase's peak RSS, CPU and output line.
phase() {
  local name=$1; shift
  local peak; peak=$(rss)
  local t0 c0; t0=$(date +%s.%N); c0=$(cpu_ticks)
  "$@" >"$WORK/out" 2>&1 &
  local job=$!
  while kill -0 "$job" 2>/dev/null; do
    local now; now=$(rss); [ "$now" -gt "$peak" ] && peak=$now
    sleep 0.2
  done
  wait "$job" || true
  local t1 c1; t1=$(date +%s.%N); c1=$(cpu_ticks)
  local cores; cores=$(awk -v c="$((c1 - c0))" -v hz="$TICKS" -v a="$t0" -v b="$t1" 'BEGIN {printf "%.2f", c / hz / (b - a)}')
  local what; what=$(grep -E 'Requests/sec|lines' "$WORK/out" | tr -s ' ' | tr '\n' ' ')
  printf '%-10s peak VmRSS %-9s after %-9s CPU %s cores over %.1f s  %s\n' \
    "$name" "$(mb "$peak")" "$(mb "$(rss)")" "$cores" "$(awk -v a="$t0" -v b="$t1" 'BEGIN {print b - a}')" "$what"
}

cat >"$WORK/long.lua" <<'LUA'
local counter = 0
function setup(thread) thread:set("id", math.random(1, 1000000)) end
request = function()
  counter = counter + 1
  return wrk.format("GET", "/api/v1/loans/schedule?principal=" .. (100000 + id * 1000 + counter) .. "&annual_rate_percent=1&term_months=6000")
end
LUA
python3 - "$WORK/batch.ndjson" <<'PY'
import sys
with open(sys.argv[1], "w") as f:
    for i in range(100000):
        f.write('{"id":%d,"job":"loan_check","request":{"principal":"%d","annual_rate_percent":"6.5",'
                '"term_months":360,"quoted_payment":"1580.17","quoted_apr_percent":"6.5"}}\n' % (i, 150000 + i))
PY
batch() { curl -s -H 'content-type: application/x-ndjson' --data-binary @"$WORK/batch.ndjson" "$BASE/api/v1/batch" | wc -l | sed 's/$/ lines answered/'; }
two_batches() { batch & batch; wait; }

echo "$BIN, pid $PID, on $BASE; $(nproc) cores; $(date -u '+%Y-%m-%d %H:%M UTC')"
sleep 1
echo "idle       VmRSS $(mb "$(rss)") one second after start"
for path in / /loan /api/openapi.json "/api/v1/loans/schedule?principal=100000&annual_rate_percent=6&term_months=360" /metrics; do
  curl -s -o /dev/null "$BASE$path"
done
echo "idle       VmRSS $(mb "$(rss)") after one request of each kind"
phase healthz wrk -t2 -c16 -d"${EACH}s" "$BASE/healthz"
phase stored wrk -t2 -c16 -d"${EACH}s" "$BASE/api/v1/loans/schedule?principal=100000&annual_rate_percent=6&term_months=360"
phase distinct wrk -t2 -c16 -d"${EACH}s" -s scripts/distinct-schedules.lua "$BASE" -- 7
phase long wrk -t2 -c16 -d"${EACH}s" -s "$WORK/long.lua" "$BASE"
phase batch batch
phase "2 batches" two_batches
sleep 1
echo "at rest    VmRSS $(mb "$(rss)") one second after the last phase; VmHWM (peak of the run) $(mb "$(hwm)")"
