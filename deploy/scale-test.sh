#!/usr/bin/env bash
# Three replicas behind HAProxy on 127.0.0.1, one stopped with SIGTERM and another
# killed with SIGKILL under mixed load, then both restarted: no GET may fail, every
# POST is answered (after a retry where it failed with 502/503 or a lost
# connection), and a 50,000-line NDJSON batch loses and duplicates no line (or
# fails as a whole and succeeds on its one retry). About 50 s.
#
# Usage: bash deploy/scale-test.sh [residue binary]      (default target/debug/residue)
# Environment (all optional): SCALE_DURATION (load seconds, 36), SCALE_BATCH_LINES
#   (50000), SCALE_BATCH_ON (term: the batch's replica gets the SIGTERM and drains it;
#   kill: it gets the SIGKILL and the batch is sent again), SCALE_GET_RATE (120/s),
#   SCALE_POST_RATE (40/s), SCALE_KEEP_LOGS=1 (keep the replicas' and HAProxy's logs).
# The load and the checks are in deploy/scale_test.py (Python's standard library);
# the balancer's configuration is deploy/haproxy.cfg.
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=${1:-target/debug/residue}
[ -x "$BIN" ] || { echo "no executable at $BIN: build it first (cargo build)" >&2; exit 1; }
if ! command -v haproxy >/dev/null && [ ! -x /usr/sbin/haproxy ]; then
  echo "installing haproxy from Debian's packages"
  apt-get install -y haproxy >/dev/null 2>&1 || { apt-get update >/dev/null && apt-get install -y haproxy >/dev/null; }
fi
# The test runs its own HAProxy and replicas on free loopback ports (any other
# HAProxy on the machine is left alone) and stops them when it ends.
command -v python3 >/dev/null || { echo "python3 is missing" >&2; exit 1; }
exec python3 deploy/scale_test.py "$BIN"
