#!/usr/bin/env bash
# End-to-end tests of Residue's pages in headless Debian Chromium (playwright-core),
# with an axe-core accessibility check.
#
#   bash tests/browser/run.sh target/debug/residue [extra node --test arguments]
#
# Installs chromium + chromium-driver with apt-get when /usr/bin/chromium is
# missing, runs `npm ci` in tests/browser when node_modules is missing, starts the
# server on 127.0.0.1:18640 (BROWSER_TEST_ADDR overrides), waits for GET /healthz
# (up to 30 s), runs `node --test tests/browser/*.test.mjs`, stops the server and
# exits with the runner's status. Screenshots go to screenshots/ (kept out of git).
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
    echo "browser tests: $binary is not an executable" >&2
    exit 2
fi

for tool in node npm; do
    if ! command -v "$tool" >/dev/null 2>&1; then
        echo "browser tests: '$tool' is not installed; install Node.js 20 or newer with npm (e.g. apt-get install -y nodejs npm)" >&2
        exit 1
    fi
done
node_major="$(node -p 'process.versions.node.split(".")[0]')"
if (( node_major < 20 )); then
    echo "browser tests: Node.js 20 or newer is needed (found $(node --version))" >&2
    exit 1
fi

if [[ ! -x /usr/bin/chromium ]]; then
    echo "browser tests: installing Debian's chromium and chromium-driver" >&2
    apt-get update
    DEBIAN_FRONTEND=noninteractive apt-get install -y chromium chromium-driver
fi
/usr/bin/chromium --version 2>/dev/null | grep -v 'unexpected operator' || true

if [[ ! -d "$here/node_modules/playwright-core" || ! -d "$here/node_modules/axe-core" ]]; then
    echo "browser tests: installing playwright-core and axe-core (npm)" >&2
    if [[ -f "$here/package-lock.json" ]]; then
        (cd "$here" && npm ci --no-audit --no-fund)
    else
        (cd "$here" && npm install --no-audit --no-fund)
    fi
fi

addr="${BROWSER_TEST_ADDR:-127.0.0.1:18640}"
base="http://$addr"
mkdir -p screenshots

log="$(mktemp -t residue-browser.XXXXXX.log)"
server_pid=""
cleanup() {
    if [[ -n "$server_pid" ]] && kill -0 "$server_pid" 2>/dev/null; then
        kill "$server_pid" 2>/dev/null || true
        wait "$server_pid" 2>/dev/null || true
    fi
    rm -f "$log"
}
trap cleanup EXIT

"$binary" --addr "$addr" >"$log" 2>&1 &
server_pid=$!

healthy=""
for _ in $(seq 1 60); do
    if ! kill -0 "$server_pid" 2>/dev/null; then
        echo "browser tests: the server exited before answering; its output:" >&2
        cat "$log" >&2
        exit 1
    fi
    if node -e '
        fetch(process.argv[1], { signal: AbortSignal.timeout(2000) })
          .then((r) => process.exit(r.status === 200 ? 0 : 1), () => process.exit(1));
    ' "$base/healthz" 2>/dev/null; then
        healthy=1
        break
    fi
    sleep 0.5
done
if [[ -z "$healthy" ]]; then
    echo "browser tests: GET $base/healthz did not answer 200 within 30 s; server output:" >&2
    cat "$log" >&2
    exit 1
fi

status=0
RESIDUE_BASE_URL="$base" node --test --test-concurrency=1 "$@" tests/browser/*.test.mjs || status=$?
if (( status != 0 )); then
    echo "browser tests: failed (status $status); the server's last log lines:" >&2
    tail -n 20 "$log" >&2 || true
fi
exit "$status"
