#!/usr/bin/env python3
"""Resident memory of a Residue server under the requests that once cost the most.

Starts the binary given on 127.0.0.1, samples its resident set (VmRSS in
/proc/PID/status) every 10 ms in a thread, and runs each case:

* the 48-line batch of maximal full schedules (6,000 weekly payments, 120 extra
  payment rules, 120 rate changes, daily compounding, dates), read normally;
* the same batch with a client that reads nothing for 10 s, then everything;
* sixteen concurrent maximal schedules by GET.

For each case it prints the starting, peak and settled (5 s after the case
ended) resident memory, and fails when the peak passes 256 MB or the settled
figure is more than 64 MB above the start. Standard library only.

    python3 tests/reliability/memory.py target/debug/residue
"""
import http.client
import json
import os
import socket
import subprocess
import sys
import threading
import time
import urllib.parse

PEAK_LIMIT_MB = 256
SETTLE_LIMIT_MB = 64


def rss_mb(pid):
    with open(f"/proc/{pid}/status") as f:
        for line in f:
            if line.startswith("VmRSS:"):
                return int(line.split()[1]) / 1024
    return 0.0


class Sampler(threading.Thread):
    def __init__(self, pid):
        super().__init__(daemon=True)
        self.pid, self.peak, self.running = pid, 0.0, True

    def run(self):
        while self.running:
            self.peak = max(self.peak, rss_mb(self.pid))
            time.sleep(0.01)


def maximal_loan():
    """The probe's loan: every list at its longest (invented figures)."""
    # Recurring extras every 2nd to 121st payment: nearly every payment starts a
    # segment of its own, each with its derivation.
    extras = [{"amount": "1", "from": 1 + k, "to": 6000, "every": 2 + k} for k in range(120)]
    changes = [{"at": 26 + 50 * k, "annual_rate_percent": str(5 + (k % 7) * 0.25)} for k in range(120)]
    return {
        "principal": "900000", "annual_rate_percent": "6.25", "term_payments": 6000,
        "payment_frequency": "weekly", "compounding": "daily",
        "funding_date": "2027-01-04", "first_payment_date": "2027-01-15",
        "extra_payments": extras, "rate_changes": changes,
    }


def maximal_query():
    loan = maximal_loan()
    q = {k: v for k, v in loan.items() if k not in ("extra_payments", "rate_changes")}
    q["extra_payments"] = ",".join(f"{e['amount']}@{e['from']}-{e['to']}/{e['every']}" for e in loan["extra_payments"])
    q["rate_changes"] = ",".join(f"{c['at']}:{c['annual_rate_percent']}" for c in loan["rate_changes"])
    return urllib.parse.urlencode(q)


def batch_body(lines=48):
    loan = maximal_loan()
    return "".join(
        json.dumps({"id": i, "job": "loan_schedule", "detail": "full", "request": loan}) + "\n"
        for i in range(lines)
    ).encode()


def post_batch(addr, body, pause=0.0):
    host, port = addr
    s = socket.create_connection((host, port))
    s.sendall(
        f"POST /api/v1/batch HTTP/1.1\r\nHost: {host}\r\nContent-Type: application/x-ndjson\r\n"
        f"Content-Length: {len(body)}\r\nConnection: close\r\n\r\n".encode() + body
    )
    if pause:
        time.sleep(pause)
    total = 0
    while True:
        chunk = s.recv(1 << 20)
        if not chunk:
            break
        total += len(chunk)
    s.close()
    return total


def get(addr, path):
    c = http.client.HTTPConnection(*addr, timeout=60)
    c.request("GET", path)
    r = c.getresponse()
    data = r.read()
    c.close()
    return r.status, len(data)


def main():
    binary = sys.argv[1]
    port = 18700 + os.getpid() % 200
    addr = ("127.0.0.1", port)
    server = subprocess.Popen([binary, "--addr", f"127.0.0.1:{port}"], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    failed = 0
    try:
        for _ in range(200):
            try:
                if get(addr, "/healthz")[0] == 200:
                    break
            except OSError:
                time.sleep(0.05)
        query = maximal_query()

        def sixteen():
            results = []
            threads = [threading.Thread(target=lambda: results.append(get(addr, "/api/v1/loans/schedule?" + query))) for _ in range(16)]
            for t in threads:
                t.start()
            for t in threads:
                t.join()
            return f"statuses {sorted(set(r[0] for r in results))}, largest answer {max(r[1] for r in results)} bytes"

        cases = [
            ("48-line full batch, read at once", lambda: f"{post_batch(addr, batch_body())} bytes"),
            ("48-line full batch, client silent 10 s", lambda: f"{post_batch(addr, batch_body(), pause=10)} bytes"),
            ("16 concurrent maximal schedules", sixteen),
        ]
        for name, run in cases:
            start = rss_mb(server.pid)
            sampler = Sampler(server.pid)
            sampler.start()
            began = time.time()
            what = run()
            took = time.time() - began
            sampler.running = False
            sampler.join()
            time.sleep(5)
            settled = rss_mb(server.pid)
            ok = sampler.peak <= PEAK_LIMIT_MB and settled - start <= SETTLE_LIMIT_MB
            failed += not ok
            print(f"{'ok  ' if ok else 'FAIL'} {name}: start {start:.0f} MB, peak {sampler.peak:.0f} MB, "
                  f"5 s later {settled:.0f} MB ({what}, {took:.1f} s)")
    finally:
        server.terminate()
        server.wait()
    print(f"{3 - failed} passed, {failed} failed")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
