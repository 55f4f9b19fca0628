#!/usr/bin/env bash
# What the 360-payment JSON schedule could reach against /healthz at best, with
# the same answer bytes. Builds, in a temporary work tree, the current commit
# with scripts/floor-experiment.patch applied (a measurement-only route,
# /floor/schedule, never merged: the 360 rows posted in integers and written
# with the answer's own row writer after a fixed copy of a real answer's head,
# so nothing of the derivation, reconciliation, milestones or field checks is
# computed), then measures in turn, ROUNDS times, on one server:
#   /healthz;
#   distinct real schedules (scripts/distinct-schedules.lua: each one computed);
#   distinct rows-only schedules (/floor/schedule, the same loans);
#   one schedule asked again and again (served from the answer store: no compute).
# Each line prints the four request rates and each one's share of /healthz.
#
#   bash scripts/floor-experiment.sh
#
# Needs wrk. Not part of CI: it measures. The first run builds every dependency
# in target/floor (a few minutes on two cores). ROUNDS (default 3),
# SECONDS_EACH (default 4), CONNECTIONS (default 16).
set -euo pipefail
cd "$(dirname "$0")/.."
repo="$(pwd)"
rounds="${ROUNDS:-3}"
seconds="${SECONDS_EACH:-4}"
connections="${CONNECTIONS:-16}"
addr="127.0.0.1:18745"
command -v wrk >/dev/null || { echo "floor-experiment: wrk is missing (apt-get install -y wrk)" >&2; exit 2; }
tree="$(mktemp -d -t residue-floor.XXXXXX)"
server=""
cleanup() {
    [[ -n "$server" ]] && kill "$server" 2>/dev/null || true
    git -C "$repo" worktree remove --force "$tree" 2>/dev/null || rm -rf "$tree"
}
trap cleanup EXIT
git worktree add --detach -q "$tree" HEAD
git -C "$tree" apply "$repo/scripts/floor-experiment.patch"
(cd "$tree" && cargo build --release --bin residue --target-dir "$repo/target/floor" >&2)
RESIDUE_LOG=warn "$repo/target/floor/release/residue" --addr "$addr" >/dev/null 2>&1 &
server=$!
for _ in $(seq 1 50); do curl -fs "http://$addr/healthz" >/dev/null 2>&1 && break; sleep 0.1; done
# The two routes answer the same rows for the same loan (checked, not assumed).
real="$(curl -fs "http://$addr/api/v1/loans/schedule?principal=100000.07&annual_rate_percent=6&term_months=360")"
floor="$(curl -fs "http://$addr/floor/schedule?principal=100000.07")"
python3 -c 'import json, sys
a, b = json.loads(sys.argv[1]), json.loads(sys.argv[2])
assert a["schedule"] == b["schedule"], "the rows-only route answers other rows"
print(f"same rows; answer bytes: real {len(sys.argv[1])}, rows-only {len(sys.argv[2])}")' "$real" "$floor"
# Both go through the same limits and answer store (each answer stored, with its tag).
for path in "/api/v1/loans/schedule?principal=100000.09&annual_rate_percent=6&term_months=360" "/floor/schedule?principal=100000.09"; do
    curl -fs -D - -o /dev/null "http://$addr$path" | grep -qi '^etag:' || { echo "floor-experiment: $path was not stored" >&2; exit 1; }
done
sed 's#/api/v1/loans/schedule?principal=" .. principal .. "&annual_rate_percent=6&term_months=360#/floor/schedule?principal=" .. principal .. "#' \
    scripts/distinct-schedules.lua >"$tree/distinct-floor.lua"
grep -q '/floor/schedule' "$tree/distinct-floor.lua"
rate() {
    wrk -t2 -c"$connections" -d"${seconds}s" "$@" | awk '/Requests\/sec/ {printf "%.0f", $2}'
}
store_hits() { curl -fs "http://$addr/metrics" | awk '/^residue_answer_cache_hits_total/ {print $2}'; }
# Each round asks for loans of its own (the wrk script's argument), so no answer
# of an earlier round comes back from the store.
for round in $(seq 1 "$rounds"); do
    h="$(rate "http://$addr/healthz")"
    hits="$(store_hits)"
    s="$(rate -s scripts/distinct-schedules.lua "http://$addr" -- "$round")"
    f="$(rate -s "$tree/distinct-floor.lua" "http://$addr" -- "$round")"
    if (($(store_hits) > hits)); then
        echo "floor-experiment: WARNING: distinct schedules came from the answer store in round $round" >&2
    fi
    c="$(rate "http://$addr/api/v1/loans/schedule?principal=100000.07&annual_rate_percent=6&term_months=360")"
    awk -v h="$h" -v s="$s" -v f="$f" -v c="$c" 'BEGIN {
        printf "/healthz %6d/s; computed schedules %6d/s (%4.1f %%); rows only %6d/s (%4.1f %%); stored %6d/s (%4.1f %%)\n",
            h, s, 100 * s / h, f, 100 * f / h, c, 100 * c / h}'
done
