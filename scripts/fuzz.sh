#!/usr/bin/env bash
# Runs each cargo-fuzz target of fuzz/ for SECONDS (default 600), one after the other,
# and prints a summary line per target (runs, crashes). Not part of CI.
# Usage: bash scripts/fuzz.sh [SECONDS] [TARGET...]
# Needs cargo-fuzz (`cargo install cargo-fuzz`); on a stable toolchain the
# sanitizer flags need RUSTC_BOOTSTRAP=1, which this script sets.
set -uo pipefail
cd "$(dirname "$0")/../fuzz"
SECONDS_EACH=${1:-600}
shift || true
TARGETS=("$@")
[ ${#TARGETS[@]} -eq 0 ] && TARGETS=(json_parse fields query_extra engine_schedule batch_stream http_request)
command -v cargo-fuzz >/dev/null || { echo "cargo-fuzz is missing: cargo install cargo-fuzz" >&2; exit 1; }
export RUSTC_BOOTSTRAP=1
mkdir -p logs
status=0
RSS_MB=${RSS_MB:-2048}
for t in "${TARGETS[@]}"; do
  mkdir -p "corpus/$t"
  echo "== $t for ${SECONDS_EACH}s"
  cargo fuzz run -O "$t" "corpus/$t" -- -max_total_time="$SECONDS_EACH" -rss_limit_mb="$RSS_MB" \
    -max_len=4096 -timeout=20 >"logs/$t.log" 2>&1
  rc=$?
  runs=$(grep -Eo 'Done [0-9]+ runs' "logs/$t.log" | grep -Eo '[0-9]+' | tail -1)
  crashes=$(ls "artifacts/$t" 2>/dev/null | grep -Ec '^(crash|oom|timeout|leak)-' || true)
  echo "$t: ${runs:-?} runs in ${SECONDS_EACH}s, exit $rc, artifacts: ${crashes:-0}"
  [ "$rc" -ne 0 ] && { status=1; tail -30 "logs/$t.log"; }
done
exit $status
