#!/usr/bin/env python3
"""py_client_bench.py — what the Python client costs the service that calls it,
and how fast its events reach a real `concord serve`, beside file ingest of
the same lines, in one run. Not a test: it prints figures and asserts nothing.

Usage: bench/py_client_bench.py CONCORD_BINARY [EVENTS]   (default 100,000)

1. log() in the caller's thread (thread CPU time per call) for a 5 x 10
   event given as lists and as a numpy float32 array, with a sink that
   discards batches (the network is not in this figure).
2. EVENTS invented events (5 members x 10 classes over 28 days) logged into
   a Logger sending to `concord serve --listen 127.0.0.1:0` (batches of
   1,000, gzip), from the first log() to the end of flush(): events/s, and
   the CPU seconds of the client process and of the server; then `concord
   ingest` of the same lines written as one file: events/s and CPU seconds.
   On a shared machine the CPU figures are the ones to compare.
"""

import json
import os
import random
import re
import signal
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "clients", "python"))
import concord_client  # noqa: E402
from concord_client import events as cc_events  # noqa: E402

M, K, DAYS = 5, 10, 28
DAY0 = 1764547200          # 2025-12-01T00:00:00Z


class NullSink:
    def send(self, model, kind, lines):
        return {"accepted": len(lines)}

    def close(self):
        pass


def invented(n, seed=1):
    rng = random.Random(seed)
    out = []
    for i in range(n):
        rows = []
        for _ in range(M):
            row = [rng.random() for _ in range(K)]
            s = sum(row)
            rows.append([v / s for v in row])
        out.append(("b-%08d" % i, rows, DAY0 + (i * DAYS * 86400) // n))
    return out


def per_call_us(log, items):
    t0 = time.thread_time()
    for eid, probs, ts in items:
        log.log(eid, probs, ts=ts)
    return (time.thread_time() - t0) / len(items) * 1e6


def caller_cost(n=20000):
    items = invented(n, seed=2)
    log = concord_client.Logger(NullSink(), "bench", max_buffer=n + 1, batch_size=1000)
    lists = per_call_us(log, items)
    log.close(600)
    try:
        import numpy as np
    except ImportError:
        return lists, None
    arrays = [(e, np.array(p, dtype=np.float32), t) for e, p, t in items]
    log = concord_client.Logger(NullSink(), "bench", max_buffer=n + 1, batch_size=1000)
    numpy_us = per_call_us(log, arrays)
    log.close(600)
    return lists, numpy_us


def start_serve(binary, db, work):
    err = open(os.path.join(work, "serve.err"), "wb")
    proc = subprocess.Popen([binary, "serve", "--db", db, "--listen", "127.0.0.1:0"],
                            stdout=subprocess.DEVNULL, stderr=err)
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:
        with open(err.name, "rb") as f:
            m = re.search(rb"listening on (http://127\.0\.0\.1:\d+) ", f.read())
        if m:
            return proc, m.group(1).decode()
        if proc.poll() is not None:
            break
        time.sleep(0.05)
    proc.kill()
    raise SystemExit("concord serve did not start")


def main():
    if len(sys.argv) < 2:
        raise SystemExit(__doc__)
    binary = sys.argv[1]
    n = int(sys.argv[2]) if len(sys.argv) > 2 else 100000
    print("machine: %d CPUs, load average %.2f %.2f %.2f" % ((os.cpu_count(),) + os.getloadavg()))

    lists_us, numpy_us = caller_cost()
    print("log() in the caller's thread, 5 x 10 event: %.1f us (lists)%s"
          % (lists_us, "" if numpy_us is None else ", %.1f us (numpy float32)" % numpy_us))

    items = invented(n)
    with tempfile.TemporaryDirectory(prefix="concord-pybench-") as work:
        served_db = os.path.join(work, "served.db")
        proc, url = start_serve(binary, served_db, work)
        try:
            log = concord_client.Logger(url, "bench", batch_size=1000, max_buffer=n + 1,
                                        timeout=600)
            t0 = time.monotonic()
            c0 = time.process_time()
            for eid, probs, ts in items:
                log.log(eid, probs, ts=ts)
            ok = log.flush(3600)
            client_s = time.monotonic() - t0
            client_cpu = time.process_time() - c0
            st = log.stats()
            log.close(60)
        finally:
            proc.send_signal(signal.SIGTERM)
            _, _, usage = os.wait4(proc.pid, 0)
            server_cpu = usage.ru_utime + usage.ru_stime
        if not ok or st["accepted"] != n:
            raise SystemExit("client run incomplete: %r (%s)" % (st, log.last_error))

        path = os.path.join(work, "events.jsonl")
        with open(path, "wb") as f:
            for eid, probs, ts in items:
                f.write(cc_events.encode_event(eid, probs, ts))
        t0 = time.monotonic()
        ing = subprocess.Popen([binary, "ingest", "--db", os.path.join(work, "file.db"), "--model",
                                "bench", "--quiet", path])
        _, status, usage = os.wait4(ing.pid, 0)
        file_s = time.monotonic() - t0
        file_cpu = usage.ru_utime + usage.ru_stime
        if status != 0:
            raise SystemExit("concord ingest failed")

    print("%d events through Logger -> concord serve (loopback, 1,000-event gzip batches): "
          "%.1f s, %.0f events/s; CPU: client %.1f s (%.0f us/event), server %.1f s "
          "(%.0f us/event)" % (n, client_s, n / client_s, client_cpu, client_cpu / n * 1e6,
                               server_cpu, server_cpu / n * 1e6))
    print("the same lines by concord ingest from a file: %.1f s, %.0f events/s; CPU %.1f s "
          "(%.0f us/event)" % (file_s, n / file_s, file_cpu, file_cpu / n * 1e6))
    print("events/s, client/file ingest: %.2f; CPU per event, server/file ingest: %.2f, "
          "client/file ingest: %.2f" % (file_s / client_s, server_cpu / file_cpu,
                                        client_cpu / file_cpu))


if __name__ == "__main__":
    main()
