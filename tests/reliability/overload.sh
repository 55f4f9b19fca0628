#!/usr/bin/env bash
# Overload and shutdown tests on 127.0.0.1, bounded for CI (about 45 s by default).
#
# Usage: bash tests/reliability/overload.sh <residue binary>
#   DURATION=120 bash tests/reliability/overload.sh target/release/residue   # 60 s a phase
# Environment: DURATION (load seconds of both phases together, default 20), MAX_IN_FLIGHT (default 2),
#              BATCH_LINES (lines of the batch in flight at SIGTERM, default 600).
#
# Twice, for short schedules (360 payments, computed on the runtime's own threads)
# and for long ones (6,000 payments, on blocking threads behind the in-flight limit):
# 1. Saturation: wrk at MAX_IN_FLIGHT connections for 3 s gives the throughput.
# (The answer store is off, so every request is computed.)
# 2. Overload: wrk at 3 x MAX_IN_FLIGHT connections for DURATION/2 s; checks only
#    200s and 503s, every 503 with Retry-After, VmRSS sampled each second under
#    200 MB, /healthz polled every 0.5 s answers 200 throughout; for the long
#    schedules, that the in-flight limit refused the excess with 503.
# 3. Shutdown: slow requests (6,000-payment schedules and a batch) in flight, SIGTERM:
#    each gets a complete answer, a new connection is refused, the process exits 0.
set -uo pipefail
BIN=${1:?usage: overload.sh <residue binary>}
DURATION=${DURATION:-20}
MAX_IN_FLIGHT=${MAX_IN_FLIGHT:-2}
BATCH_LINES=${BATCH_LINES:-600}
RSS_LIMIT_KB=$((200 * 1024))
command -v wrk >/dev/null || { echo "wrk is missing: apt-get install -y wrk" >&2; exit 1; }
command -v curl >/dev/null || { echo "curl is missing" >&2; exit 1; }
command -v python3 >/dev/null || { echo "python3 is missing" >&2; exit 1; }

WORK=$(mktemp -d)
PASSED=0
FAILED=0
PID=
BG=()
cleanup() {
  for p in "${BG[@]}"; do kill "$p" 2>/dev/null; done
  [ -n "$PID" ] && kill "$PID" 2>/dev/null
  rm -rf "$WORK"
}
trap cleanup EXIT
pass() { PASSED=$((PASSED + 1)); echo "  PASS $*"; }
fail() { FAILED=$((FAILED + 1)); echo "  FAIL $*"; }
check() { local what=$1; shift; if "$@"; then pass "$what"; else fail "$what"; fi; }

PORT=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])')
BASE="http://127.0.0.1:$PORT"
RESIDUE_LOG=warn "$BIN" --addr "127.0.0.1:$PORT" --max-in-flight "$MAX_IN_FLIGHT" --answer-cache-mb 0 \
  --request-timeout-secs 10 >"$WORK/server.log" 2>&1 &
PID=$!
for _ in $(seq 100); do curl -sf -o /dev/null "$BASE/healthz" && break; sleep 0.1; done
curl -sf -o /dev/null "$BASE/healthz" || { echo "the server did not start"; cat "$WORK/server.log"; exit 1; }
echo "residue pid $PID on $BASE, max-in-flight $MAX_IN_FLIGHT, load ${DURATION}s"

cat >"$WORK/count.lua" <<'LUA'
-- Counts statuses per thread; a 503 without Retry-After counts as "bad_503".
local threads = {}
function setup(thread) table.insert(threads, thread) end
function init(args) counts = {} end
function response(status, headers, body)
  local key = tostring(status)
  if status == 503 and headers["retry-after"] == nil and headers["Retry-After"] == nil then
    key = "bad_503"
  end
  counts[key] = (counts[key] or 0) + 1
end
function done(summary, latency, requests)
  local total = {}
  for _, t in ipairs(threads) do
    local c = t:get("counts")
    for k, v in pairs(c) do total[k] = (total[k] or 0) + v end
  end
  local f = io.open(os.getenv("COUNTS_FILE"), "w")
  for k, v in pairs(total) do f:write(k .. " " .. v .. "\n") end
  f:write("socket_errors " .. (summary.errors.connect + summary.errors.read + summary.errors.write + summary.errors.timeout) .. "\n")
  f:close()
end
LUA

# One load phase: saturation for 3 s, then 3x that many connections for PHASE_SECONDS.
# $1 names it, $2 is the path, $3 is "refuses" when the in-flight limit must have
# refused some requests with 503 (jobs long enough to hold every permit at once).
load_phase() {
  local label=$1 LOAD_PATH=$2 expect=$3 DURATION=$PHASE_SECONDS
  echo "== $label"
  echo "== saturation: $MAX_IN_FLIGHT connections, 3 s"
  COUNTS_FILE="$WORK/sat.counts" wrk -t2 -c"$MAX_IN_FLIGHT" -d3s -s "$WORK/count.lua" "$BASE$LOAD_PATH" >"$WORK/sat.txt" 2>&1
  grep -E 'Requests/sec|Latency' "$WORK/sat.txt" | sed 's/^/  /'
  sed 's/^/  status /' "$WORK/sat.counts"

  CONNS=$((3 * MAX_IN_FLIGHT))
  echo "== overload: $CONNS connections (3x), ${DURATION} s"
  : >"$WORK/rss"
  ( while kill -0 "$PID" 2>/dev/null; do
      awk '/VmRSS/ {print $2}' "/proc/$PID/status" 2>/dev/null >>"$WORK/rss"; sleep 1
    done ) &
  BG+=($!); RSS_SAMPLER=$!
  ( end=$((SECONDS + DURATION)); ok=0; bad=0
    while [ $SECONDS -lt $end ]; do
      code=$(curl -s -o /dev/null -m 2 -w '%{http_code}' "$BASE/healthz")
      if [ "$code" = 200 ]; then ok=$((ok + 1)); else bad=$((bad + 1)); echo "healthz $code" >>"$WORK/health.bad"; fi
      sleep 0.5
    done
    echo "$ok $bad" >"$WORK/health" ) &
  HEALTH_POLLER=$!
  COUNTS_FILE="$WORK/load.counts" wrk -t2 -c"$CONNS" -d"${DURATION}s" --timeout 15s -s "$WORK/count.lua" \
    "$BASE$LOAD_PATH" >"$WORK/load.txt" 2>&1
  wait "$HEALTH_POLLER"
  grep -E 'Requests/sec|Latency|requests in' "$WORK/load.txt" | sed 's/^/  /'
  sed 's/^/  status /' "$WORK/load.counts"
  count_of() { awk -v k="$1" '$1 == k {print $2}' "$WORK/load.counts" | grep . || echo 0; }
  others=$(awk '$1 != "200" && $1 != "503" && $1 != "socket_errors" {s += $2} END {print s + 0}' "$WORK/load.counts")
  check "only 200s and 503s under load (others: $others)" [ "$others" -eq 0 ]
  check "some requests succeeded under load ($(count_of 200) x 200)" [ "$(count_of 200)" -gt 0 ]
  check "every 503 carried Retry-After ($(count_of bad_503) without)" [ "$(count_of bad_503)" -eq 0 ]
  if [ "$(count_of 503)" -gt 0 ]; then
    echo "  note: the in-flight limit refused $(count_of 503) requests with 503 + Retry-After"
  else
    echo "  note: no 503 at all: with $(nproc) cores the handlers never held $MAX_IN_FLIGHT permits at once"
  fi
  check "no socket errors under load ($(count_of socket_errors))" [ "$(count_of socket_errors)" -eq 0 ]
  read -r hok hbad <"$WORK/health"
  check "/healthz answered throughout ($hok ok, $hbad not)" [ "$hbad" -eq 0 -a "$hok" -gt 0 ]
  max_rss=$(sort -n "$WORK/rss" | tail -1)
  check "resident memory under 200 MB (max VmRSS ${max_rss} kB over $(wc -l <"$WORK/rss") samples)" [ "${max_rss:-999999999}" -lt "$RSS_LIMIT_KB" ]
  if [ "$expect" = refuses ]; then
    check "the in-flight limit refused the excess at once ($(count_of 503) x 503)" [ "$(count_of 503)" -gt 0 ]
  fi
}

PHASE_SECONDS=$(( (DURATION + 1) / 2 ))
# A 360-payment schedule is computed on the runtime's own threads (about 0.1 ms);
# a 6,000-payment one on a blocking thread holding its in-flight permit.
load_phase "short schedules (computed on the runtime's threads)" \
  "/api/v1/loans/schedule?principal=250000&annual_rate_percent=7.125&term_months=360" any
load_phase "long schedules (computed on blocking threads behind the in-flight limit)" \
  "/api/v1/loans/schedule?principal=100000&annual_rate_percent=1&term_months=6000" refuses

echo "== shutdown: SIGTERM with slow requests in flight"
SLOW_PATH="/api/v1/loans/schedule?principal=100000&annual_rate_percent=1&term_months=6000"
python3 -c "
import json
for i in range($BATCH_LINES):
    print(json.dumps({'id': i, 'job': 'loan_schedule', 'request': {'principal': '100000', 'annual_rate_percent': '6', 'term_months': 360}}))
" >"$WORK/batch.ndjson"
SLOW=()
for i in $(seq 1 "$MAX_IN_FLIGHT"); do
  curl -s -o "$WORK/slow$i.body" -w '%{http_code}' "$BASE$SLOW_PATH" >"$WORK/slow$i.code" 2>"$WORK/slow$i.err" &
  SLOW+=($!)
done
curl -s -N -H 'content-type: application/x-ndjson' --data-binary @"$WORK/batch.ndjson" \
  -o "$WORK/batch.out" -w '%{http_code}' "$BASE/api/v1/batch" >"$WORK/batch.code" 2>"$WORK/batch.err" &
BATCH_CURL=$!
sleep 0.3
kill -TERM "$PID"
sleep 0.1
if curl -s -o /dev/null -m 2 "$BASE/healthz"; then refused=1; else refused=$?; fi
check "a new connection after SIGTERM is refused (curl exit $refused, 7 = refused)" [ "$refused" -eq 7 ]
for i in "${!SLOW[@]}"; do wait "${SLOW[$i]}"; done
wait "$BATCH_CURL"
status=0
for _ in $(seq 300); do kill -0 "$PID" 2>/dev/null || break; sleep 0.1; done
if kill -0 "$PID" 2>/dev/null; then
  fail "the process exits within 30 s of SIGTERM"
  kill -KILL "$PID"
else
  wait "$PID"; status=$?
  check "the process exits 0 after SIGTERM (status $status)" [ "$status" -eq 0 ]
fi
PID=
for i in $(seq 1 "$MAX_IN_FLIGHT"); do
  code=$(cat "$WORK/slow$i.code")
  complete=$(python3 -c "import json,sys; d=json.load(open('$WORK/slow$i.body')); print(len(d['schedule']) if 'schedule' in d else 'json')" 2>/dev/null || echo cut)
  # 503 is an allowed answer too (the in-flight limit), but it must be complete JSON.
  check "in-flight schedule $i answered completely (status $code, body: $complete)" \
    [ "$complete" != cut -a \( "$code" = 200 -o "$code" = 503 \) ]
done
blines=$(python3 -c "
import json
n = 0
for l in open('$WORK/batch.out'):
    json.loads(l); n += 1
print(n)" 2>/dev/null || echo cut)
check "the batch in flight answered every line ($blines of $BATCH_LINES, status $(cat "$WORK/batch.code"))" \
  [ "$blines" = "$BATCH_LINES" ]

echo "overload: $PASSED passed, $FAILED failed"
[ "$FAILED" -eq 0 ]
