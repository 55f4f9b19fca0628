"""Three Residue replicas behind HAProxy, two of them going away under mixed load.

Run by deploy/scale-test.sh (which installs HAProxy first); Python's standard
library only. Usage: python3 deploy/scale_test.py BINARY

Timeline (seconds after the load starts; SCALE_DURATION sets the load's length):
  0   GET schedules (repeated, distinct and CSV) and POST /api/v1/loans/check
      start, paced, through HAProxy.
  2   one NDJSON batch of SCALE_BATCH_LINES (50,000) loan_check lines is
      streamed through HAProxy, its body sent over SCALE_BATCH_SECONDS (9) so
      that it is still streaming at 5 and 9 whatever the build's speed; the
      replica that answers it is read from the X-Residue-Replica header.
  5   SIGTERM to one replica: by default the batch's (SCALE_BATCH_ON=term), so a
      streamed batch is drained through a graceful shutdown; with
      SCALE_BATCH_ON=kill the batch's replica is the one killed below instead.
  8.5 six more checks send their headers and half their body (HAProxy has
      passed each to a replica), and the rest only after:
  9   SIGKILL to another replica; the checks it held fail (502) and are sent again.
  13  both are started again on their ports.
Success:
  - no GET fails (HAProxy retries and redispatches them);
  - every POST is answered 200, directly or after failing with a status a
    client can retry safely (502, 503) or a lost connection, then sent again;
  - the batch's ids out equal its ids in (as a multiset, every line ok), or the
    batch failed as a whole (a retryable status or a cut stream) and its one
    retry brought them all;
  - the replica given SIGTERM answered /readyz 503 within 100 ms while /healthz
    stayed 200, HAProxy took it out of rotation before its listener closed, and
    it exited 0 within the delay plus its drain limit;
  - at least one check was in flight on the killed replica (so the retry path ran);
  - both restarted replicas are back in rotation and answering.
Prints each check, the figures, and one line "N passed, M failed"; exits 1 if
any check failed.
"""

import collections
import csv
import http.client
import io
import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time

BIN = sys.argv[1] if len(sys.argv) > 1 else "target/debug/residue"
DURATION = float(os.environ.get("SCALE_DURATION", "36"))
BATCH_LINES = int(os.environ.get("SCALE_BATCH_LINES", "50000"))
BATCH_ON = os.environ.get("SCALE_BATCH_ON", "term")
# The batch's body is sent over at least this long (its retry at full speed).
BATCH_SECONDS = float(os.environ.get("SCALE_BATCH_SECONDS", "9"))
GET_THREADS = int(os.environ.get("SCALE_GET_THREADS", "4"))
GET_RATE = float(os.environ.get("SCALE_GET_RATE", "120"))  # a second, all threads
POST_THREADS = int(os.environ.get("SCALE_POST_THREADS", "2"))
POST_RATE = float(os.environ.get("SCALE_POST_RATE", "40"))
PROBES = 6  # checks in flight when the SIGKILL comes
DELAY = 2  # --shutdown-delay-secs of each replica
REQUEST_TIMEOUT, HEADER_TIMEOUT = 10, 10  # the replicas' defaults: drain limit 20 s
T_BATCH, T_TERM, T_KILL, T_RESTART = 2.0, 5.0, 9.0, 13.0
HAPROXY_CFG = os.path.join(os.path.dirname(os.path.abspath(__file__)), "haproxy.cfg")
RETRYABLE = (502, 503)
CHECK_BODY = ('{"principal":"%d","annual_rate_percent":"6.5","term_months":360,'
              '"quoted_payment":"1580.17","quoted_apr_percent":"6.5"}')

started = time.monotonic()
work = tempfile.mkdtemp(prefix="residue-scale-")
results = []  # (ok, what)


def check(ok, what):
    results.append((bool(ok), what))
    print(("  PASS " if ok else "  FAIL ") + what, flush=True)


def free_ports(n):
    socks = [socket.socket() for _ in range(n)]
    for s in socks:
        s.bind(("127.0.0.1", 0))
    ports = [s.getsockname()[1] for s in socks]
    for s in socks:
        s.close()
    return ports


def get(port, path, timeout=2.0):
    """(status, body) of one GET straight to a port; (None, error) on failure."""
    try:
        c = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
        c.request("GET", path)
        r = c.getresponse()
        body = r.read()
        c.close()
        return r.status, body
    except (OSError, http.client.HTTPException) as e:
        return None, repr(e)


def p99(values):
    if not values:
        return float("nan")
    v = sorted(values)
    return v[min(len(v) - 1, int(0.99 * len(v)))]


class Replica:
    def __init__(self, name, port):
        self.name, self.port, self.proc, self.starts = name, port, None, 0

    def start(self):
        self.starts += 1
        log = open(os.path.join(work, f"{self.name}-{self.starts}.log"), "wb")
        env = dict(os.environ, RESIDUE_LOG="info")
        self.proc = subprocess.Popen(
            [BIN, "--addr", f"127.0.0.1:{self.port}", "--shutdown-delay-secs", str(DELAY),
             "--request-timeout-secs", str(REQUEST_TIMEOUT),
             "--header-timeout-secs", str(HEADER_TIMEOUT), "--log-format", "json"],
            stdout=log, stderr=subprocess.STDOUT, env=env)
        return self.proc

    def wait_ready(self, seconds=10):
        end = time.monotonic() + seconds
        while time.monotonic() < end:
            if self.proc.poll() is not None:
                return False
            if get(self.port, "/readyz", 0.5)[0] == 200:
                return True
            time.sleep(0.05)
        return False


# ---------------------------------------------------------------- the balancer

class Stats(threading.Thread):
    """Polls HAProxy's CSV statistics every 100 ms and keeps each server's
    status changes with their time."""

    def __init__(self, port):
        super().__init__(daemon=True)
        self.port, self.stop = port, threading.Event()
        self.status, self.changes, self.rows = {}, [], {}

    def read(self):
        code, body = get(self.port, "/stats;csv", 1.0)
        if code != 200:
            return {}
        text = body.decode().lstrip("# ")
        return {r["svname"]: r for r in csv.DictReader(io.StringIO(text))
                if r["pxname"] == "residue"}

    def run(self):
        while not self.stop.is_set():
            rows = self.read()
            if rows:
                self.rows = rows
                for name, r in rows.items():
                    st = r["status"].split(" ")[0]
                    if self.status.get(name) != st:
                        self.status[name] = st
                        self.changes.append((time.monotonic(), name, st))
            time.sleep(0.1)

    def became(self, name, status, after):
        for t, n, st in self.changes:
            if n == name and st == status and t >= after:
                return t
        return None


# ---------------------------------------------------------------- the load

class Tally:
    def __init__(self):
        self.lock = threading.Lock()
        self.ok = 0
        self.ok_after_retry = 0
        self.failed = 0
        self.retry_reasons = collections.Counter()
        self.fail_reasons = collections.Counter()
        self.latencies = []
        self.events = []  # (time.monotonic(), a retryable failure)

    def add(self, ok, latency, retried_for=(), failure=None):
        with self.lock:
            self.latencies.append(latency)
            if ok and retried_for:
                self.ok_after_retry += 1
            elif ok:
                self.ok += 1
            else:
                self.failed += 1
                self.fail_reasons[failure] += 1
            for reason in retried_for:
                self.retry_reasons[reason] += 1


gets, posts, probed = Tally(), Tally(), Tally()
stop_load = threading.Event()


def paced(rate, body):
    """Calls body(i) about `rate` times a second until the load stops."""
    interval = 1.0 / rate
    t0 = time.monotonic()
    i = 0
    while not stop_load.is_set():
        body(i)
        i += 1
        wait = t0 + i * interval - time.monotonic()
        if wait > 0:
            stop_load.wait(wait)


def get_client(lb_port, n):
    conn = [None]
    paths = [
        "/api/v1/loans/schedule?principal=250000&annual_rate_percent=6.5&term_months=360",
        None,  # a distinct, computed schedule
        "/api/v1/loans/schedule.csv?principal=14750&annual_rate_percent=8.9&term_months=60",
        None,
    ]

    def one(i):
        path = paths[i % 4] or (
            f"/api/v1/loans/schedule?principal={100000 + n * 1000003 + i}"
            f"&annual_rate_percent=6.25&term_months=360")
        t = time.monotonic()
        try:
            if conn[0] is None:
                conn[0] = http.client.HTTPConnection("127.0.0.1", lb_port, timeout=15)
            conn[0].request("GET", path)
            r = conn[0].getresponse()
            body = r.read()
            if r.will_close:
                conn[0].close()
                conn[0] = None
            ok = r.status == 200 and len(body) > 0
            gets.add(ok, time.monotonic() - t, failure=None if ok else f"status {r.status}")
        except (OSError, http.client.HTTPException) as e:
            if conn[0] is not None:
                conn[0].close()
            conn[0] = None
            gets.add(False, time.monotonic() - t, failure=type(e).__name__)

    paced(GET_RATE / GET_THREADS, one)


def post_client(lb_port, n):
    conn = [None]

    def one(i):
        body = CHECK_BODY % (200000 + n * 1000003 + i)
        t = time.monotonic()
        retried = []
        for attempt in range(5):
            try:
                if conn[0] is None:
                    conn[0] = http.client.HTTPConnection("127.0.0.1", lb_port, timeout=15)
                conn[0].request("POST", "/api/v1/loans/check", body,
                                {"Content-Type": "application/json"})
                r = conn[0].getresponse()
                answer = r.read()
                if r.will_close:
                    conn[0].close()
                    conn[0] = None
                if r.status == 200 and b'"computed_payment"' in answer:
                    posts.add(True, time.monotonic() - t, retried)
                    return
                if r.status not in RETRYABLE:
                    posts.add(False, time.monotonic() - t, retried, f"status {r.status}")
                    return
                retried.append(f"status {r.status}")
                with posts.lock:
                    posts.events.append((time.monotonic(), f"status {r.status}"))
            except (OSError, http.client.HTTPException) as e:
                # The connection was lost (refused, reset, or the answer cut):
                # a check is a pure computation, so sending it again is safe.
                if conn[0] is not None:
                    conn[0].close()
                conn[0] = None
                retried.append(type(e).__name__)
                with posts.lock:
                    posts.events.append((time.monotonic(), type(e).__name__))
            time.sleep(0.05 * (attempt + 1))
        posts.add(False, time.monotonic() - t, retried, "gave up after 5 attempts")

    paced(POST_RATE / POST_THREADS, one)


# Checks caught in flight by the SIGKILL: each sends its headers and half its
# body before the kill and the rest after it, so that HAProxy has already passed
# it to a replica; those on the killed one fail and are sent again.
probes = []  # per probe: the replica and outcome of each attempt


def probe_post(lb_port, n, release):
    body = (CHECK_BODY % (400000 + n)).encode()
    attempts = []
    probes.append(attempts)
    t = time.monotonic()
    for attempt in range(5):
        sock = None
        try:
            sock = socket.create_connection(("127.0.0.1", lb_port), timeout=15)
            sock.sendall(b"POST /api/v1/loans/check HTTP/1.1\r\nHost: residue\r\n"
                         b"Content-Type: application/json\r\nContent-Length: %d\r\n\r\n"
                         % len(body) + body[:len(body) // 2])
            if attempt == 0:
                release.wait(10)
            sock.sendall(body[len(body) // 2:])
            r = http.client.HTTPResponse(sock, method="POST")
            r.begin()
            answer = r.read()
            attempts.append((r.getheader("X-Residue-Replica"), r.status))
            if r.status == 200 and b'"computed_payment"' in answer:
                probed.add(True, time.monotonic() - t, [f"status {s}" for _, s in attempts[:-1]])
                return
            if r.status not in RETRYABLE:
                probed.add(False, time.monotonic() - t, failure=f"status {r.status}")
                return
        except (OSError, http.client.HTTPException) as e:
            attempts.append((None, type(e).__name__))
        finally:
            if sock is not None:
                sock.close()
        time.sleep(0.05 * (attempt + 1))
    probed.add(False, time.monotonic() - t, failure="gave up after 5 attempts")


# ---------------------------------------------------------------- the batch

batch_in = [b'{"id":"b%d","job":"loan_check","request":%s}\n'
            % (i, (CHECK_BODY % (300000 + i)).encode()) for i in range(BATCH_LINES)]
batch_body = b"".join(batch_in)
ids_in = collections.Counter(b'"b%d"' % i for i in range(BATCH_LINES))
batch = {"attempts": [], "replica": None, "headers_at": threading.Event()}


def batch_attempt(lb_port, pace):
    """Streams the batch and reads the answers at the same time; with `pace`, the
    body is sent over at least BATCH_SECONDS, so that the batch is still streaming
    when the replicas are stopped, whatever the build's speed. Returns (outcome,
    ids out, replica); outcome is "ok", "retryable: …" or "failed: …"."""
    sock = socket.create_connection(("127.0.0.1", lb_port), timeout=30)
    head = (b"POST /api/v1/batch HTTP/1.1\r\nHost: residue\r\n"
            b"Content-Type: application/x-ndjson\r\nContent-Length: %d\r\n\r\n"
            % len(batch_body))
    send_error = []

    def send():
        try:
            sock.sendall(head)
            view = memoryview(batch_body)
            t = time.monotonic()
            for off in range(0, len(view), 65536):
                if pace:
                    wait = t + BATCH_SECONDS * off / len(view) - time.monotonic()
                    if wait > 0:
                        time.sleep(wait)
                sock.sendall(view[off:off + 65536])
        except OSError as e:
            send_error.append(e)

    writer = threading.Thread(target=send, daemon=True)
    writer.start()
    ids_out = collections.Counter()
    bad_lines = 0
    replica = None
    try:
        r = http.client.HTTPResponse(sock, method="POST")
        r.begin()
        replica = r.getheader("X-Residue-Replica")
        batch["replica"] = replica
        batch["headers_at"].set()
        if r.status != 200:
            r.read()
            kind = "retryable" if r.status in RETRYABLE else "failed"
            return f"{kind}: status {r.status}", ids_out, replica
        rest = b""
        while True:
            chunk = r.read(1 << 16)
            if not chunk:
                break
            lines = (rest + chunk).split(b"\n")
            rest = lines.pop()
            for line in lines:
                if not line.startswith(b'{"id":'):
                    bad_lines += 1
                    continue
                end = line.find(b',"ok":', 6)
                ids_out[line[6:end]] += 1
                if not line.startswith(b'true', end + 6):
                    bad_lines += 1
        if rest.strip():
            bad_lines += 1
    except (OSError, http.client.HTTPException) as e:
        return f"retryable: stream cut ({type(e).__name__})", ids_out, replica
    finally:
        batch["headers_at"].set()
        sock.close()
        writer.join(5)
    if bad_lines:
        return f"failed: {bad_lines} lines not ok", ids_out, replica
    return "ok", ids_out, replica


def batch_client(lb_port):
    for attempt in range(2):
        t = time.monotonic()
        outcome, ids_out, replica = batch_attempt(lb_port, pace=attempt == 0)
        batch["attempts"].append({
            "outcome": outcome, "seconds": time.monotonic() - t, "replica": replica,
            "lines_out": sum(ids_out.values()), "equal": ids_out == ids_in})
        if not outcome.startswith("retryable"):
            return


# ---------------------------------------------------------------- the run

def main():
    haproxy_bin = shutil.which("haproxy") or "/usr/sbin/haproxy"
    ports = free_ports(5)
    lb_port, stats_port = ports[0], ports[1]
    replicas = [Replica(f"r{i + 1}", p) for i, p in enumerate(ports[2:])]
    procs = []
    hap = None
    try:
        for r in replicas:
            procs.append(r.start())
        up = all(r.wait_ready() for r in replicas)
        env = dict(os.environ, RESIDUE_LB_BIND=f"127.0.0.1:{lb_port}",
                   RESIDUE_LB_STATS=f"127.0.0.1:{stats_port}",
                   **{f"RESIDUE_REPLICA{i + 1}": f"127.0.0.1:{r.port}"
                      for i, r in enumerate(replicas)})
        hap_log = open(os.path.join(work, "haproxy.log"), "wb")
        hap = subprocess.Popen([haproxy_bin, "-db", "-f", HAPROXY_CFG], env=env,
                               stdout=hap_log, stderr=subprocess.STDOUT)
        stats = Stats(stats_port)
        end = time.monotonic() + 10
        while time.monotonic() < end and not (
                len(stats.read()) == 3 and all(
                    row["status"] == "UP" for row in stats.read().values())):
            time.sleep(0.1)
        stats.start()
        check(up and stats.read() and all(r["status"] == "UP" for r in stats.read().values()),
              f"three replicas of {BIN} and HAProxy up (balancer on 127.0.0.1:{lb_port})")
        print(f"load for {DURATION:.0f} s: GET {GET_RATE:.0f}/s, POST {POST_RATE:.0f}/s, "
              f"one batch of {BATCH_LINES} lines at {T_BATCH:.0f} s; SIGTERM at "
              f"{T_TERM:.0f} s, SIGKILL at {T_KILL:.0f} s, restarts at {T_RESTART:.0f} s "
              f"(batch on the {BATCH_ON} target)", flush=True)

        t0 = time.monotonic()
        threads = [threading.Thread(target=get_client, args=(lb_port, n))
                   for n in range(GET_THREADS)]
        threads += [threading.Thread(target=post_client, args=(lb_port, n))
                    for n in range(POST_THREADS)]
        for th in threads:
            th.start()

        def at(seconds):
            wait = t0 + seconds - time.monotonic()
            if wait > 0:
                time.sleep(wait)

        at(T_BATCH)
        batch_thread = threading.Thread(target=batch_client, args=(lb_port,))
        batch_thread.start()
        batch["headers_at"].wait(10)
        by_name = {r.name: r for r in replicas}
        batch_replica = by_name.get(batch["replica"])
        others = [r for r in replicas if r is not batch_replica]
        if batch_replica is None:
            print(f"  (the batch's replica is unknown: {batch['attempts']})")
            term, kill = replicas[0], replicas[1]
        elif BATCH_ON == "kill":
            term, kill = others[0], batch_replica
        else:
            term, kill = batch_replica, others[0]
        print(f"  the batch streams through {batch['replica']}; SIGTERM goes to "
              f"{term.name}, SIGKILL to {kill.name}", flush=True)

        at(T_TERM)
        term_proc = term.proc
        term_exit = []
        watcher = threading.Thread(
            target=lambda: term_exit.append((term_proc.wait(), time.monotonic())), daemon=True)
        watcher.start()
        term_proc.send_signal(signal.SIGTERM)
        t_term = time.monotonic()
        unready_after = None
        while time.monotonic() - t_term < 1.0:
            code, _ = get(term.port, "/readyz", 0.5)
            if code == 503:
                unready_after = time.monotonic() - t_term
                break
            time.sleep(0.005)
        health_code, _ = get(term.port, "/healthz", 0.5)
        check(unready_after is not None and unready_after <= 0.1 and health_code == 200,
              f"{term.name} answered /readyz 503 "
              f"{'%.0f ms' % (unready_after * 1000) if unready_after is not None else 'never'} "
              f"after SIGTERM, /healthz {health_code}")

        at(T_KILL - 0.5)
        release = threading.Event()
        probe_threads = [threading.Thread(target=probe_post, args=(lb_port, n, release))
                         for n in range(PROBES)]
        for th in probe_threads:
            th.start()
        at(T_KILL)
        kill.proc.send_signal(signal.SIGKILL)
        kill.proc.wait()
        time.sleep(0.2)
        release.set()

        at(T_RESTART)
        for r in (kill, term):
            for _ in range(40):
                procs.append(r.start())
                if r.wait_ready(5):
                    break
                r.proc.kill()
                r.proc.wait()
                time.sleep(0.25)
        t_restart = time.monotonic()
        at_restart = {n: int(row.get("stot") or 0) for n, row in stats.rows.items()}

        at(DURATION)
        stop_load.set()
        for th in threads + probe_threads:
            th.join(30)
        batch_thread.join(90)
        watcher.join(max(0.0, t_term + DELAY + REQUEST_TIMEOUT + HEADER_TIMEOUT + 2
                         - time.monotonic()))
        term_code, term_exit_after = (
            (term_exit[0][0], term_exit[0][1] - t_term) if term_exit else (None, float("nan")))
        end = time.monotonic() + 5
        while time.monotonic() < end and not all(
                stats.status.get(r.name) == "UP" for r in replicas):
            time.sleep(0.1)
        stats.stop.set()
        stats.join(2)
        final = stats.read()

        # ---- the checks
        down_at = stats.became(term.name, "DOWN", t_term)
        if down_at is None:
            down_at = stats.became(term.name, "NOLB", t_term)
        check(down_at is not None and down_at - t_term < DELAY,
              f"HAProxy took {term.name} out of rotation "
              f"{'%.2f s' % (down_at - t_term) if down_at else 'never'} after SIGTERM, "
              f"before its listener closed ({DELAY} s)")
        check(gets.failed == 0 and gets.ok >= DURATION * GET_RATE * 0.5,
              f"GET: {gets.ok} answered 200, {gets.failed} failed "
              f"{dict(gets.fail_reasons) if gets.failed else ''}".rstrip())
        caught = [a for a in probes if a and a[0][0] is None]
        check(probed.failed == 0 and len(probes) == PROBES and caught,
              f"checks in flight at the SIGKILL: {len(caught)} of {PROBES} on "
              f"{kill.name}, which failed "
              f"({', '.join(str(a[0][1]) for a in caught)}), each answered on its retry; "
              f"{probed.failed} failed")
        check(posts.failed == 0 and posts.ok >= DURATION * POST_RATE * 0.5,
              f"POST: {posts.ok + posts.ok_after_retry} answered 200 "
              f"({posts.ok_after_retry} after a retryable failure "
              f"{dict(posts.retry_reasons) if posts.retry_reasons else ''}), "
              f"{posts.failed} failed {dict(posts.fail_reasons) if posts.failed else ''}".rstrip())
        attempts = batch["attempts"]
        described = "; ".join(
            f"{a['outcome']} via {a['replica']} in {a['seconds']:.1f} s, "
            f"{a['lines_out']} lines out" for a in attempts)
        batch_ok = bool(attempts) and attempts[-1]["outcome"] == "ok" and attempts[-1]["equal"]
        check(batch_ok and (len(attempts) == 1 or attempts[0]["outcome"].startswith("retryable")),
              f"batch of {BATCH_LINES}: ids out {'equal' if batch_ok else 'differ from'} "
              f"ids in ({described})")
        drain_bound = DELAY + REQUEST_TIMEOUT + HEADER_TIMEOUT
        check(term_code == 0 and term_exit_after <= drain_bound + 0.5,
              f"{term.name} exited {term_code} {term_exit_after:.1f} s after SIGTERM "
              f"(bound: delay {DELAY} s + drain {REQUEST_TIMEOUT + HEADER_TIMEOUT} s)")
        restarted_up = all(final.get(r.name, {}).get("status") == "UP" for r in (term, kill))
        served_again = all(int(final.get(r.name, {}).get("stot") or 0) > at_restart.get(r.name, 0)
                           for r in (term, kill))
        check(restarted_up and served_again,
              f"restarted {kill.name} and {term.name} back in rotation "
              f"and answering again ({time.monotonic() - t_restart:.1f} s after the restarts: "
              + ", ".join(f"{n} {row['status']}" for n, row in sorted(final.items())
                          if n in by_name) + ")")
        elapsed = time.monotonic() - started
        check(elapsed < 120, f"the run took {elapsed:.0f} s (limit 120 s)")

        # ---- the figures
        retries = sum(int(r.get("wretr") or 0) for r in final.values())
        redispatches = sum(int(r.get("wredis") or 0) for r in final.values())
        served = ", ".join(f"{n} {row['stot']}" for n, row in sorted(final.items())
                           if n in by_name)
        all_lat = gets.latencies + posts.latencies
        failed = gets.failed + posts.failed + probed.failed
        print(f"requests: {len(all_lat) + len(probes) + len(attempts)} ({len(gets.latencies)} "
              f"GET, {len(posts.latencies)} paced POST checks, {len(probes)} checks held open "
              f"across the SIGKILL, {len(attempts)} batch request(s) of {BATCH_LINES} lines); "
              f"errors: {failed} failed, "
              f"{posts.ok_after_retry + probed.ok_after_retry} POSTs answered after a "
              f"retryable failure, batch attempts {len(attempts)}; "
              f"p99 latency: {p99(all_lat) * 1000:.1f} ms (GET {p99(gets.latencies) * 1000:.1f} "
              f"ms, paced POST {p99(posts.latencies) * 1000:.1f} ms), max "
              f"{max(all_lat, default=0) * 1000:.0f} ms")
        print(f"checks in flight at the SIGKILL (replica, status of each attempt; ? the "
              f"balancer's own answer): "
              + "; ".join(" -> ".join(f"{r or '?'} {st}" for r, st in a) for a in probes))
        if posts.events:
            print("POST retryable failures at (s into the load): " + ", ".join(
                f"{t - t0:.2f} {what}" for t, what in posts.events))
        print(f"HAProxy: {retries} retries, {redispatches} redispatches; "
              f"sessions since start by replica: {served}")
    finally:
        stop_load.set()
        for p in procs:
            if p.poll() is None:
                p.kill()
                p.wait()
        if hap is not None and hap.poll() is None:
            hap.terminate()
            hap.wait()
    passed = sum(1 for ok, _ in results if ok)
    failed = len(results) - passed
    if failed and os.environ.get("SCALE_KEEP_LOGS") != "1":
        print(f"logs kept in {work} (replicas' JSON logs, haproxy.log)")
    elif os.environ.get("SCALE_KEEP_LOGS") == "1":
        print(f"logs in {work}")
    else:
        shutil.rmtree(work, ignore_errors=True)
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
