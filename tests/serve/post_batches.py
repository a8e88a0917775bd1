#!/usr/bin/env python3
"""post_batches.py -- clients that post invented events to `concord serve`
in gzip batches and retry until each batch is answered with 2xx.

  post_batches.py PORT_FILE ACK_FILE [--clients 4] [--events 200000]
                  [--batch 1000] [--model d] [--token TOKEN]
  post_batches.py --dump FILE [--clients 4] [--events N] [--batch B]
                  writes the same events as one JSON Lines file, in batch
                  order, and posts nothing (for file ingest of the same lines)

PORT_FILE holds the server's port and is read again before every attempt
(the server may be restarted on another port). Event ids are
"c<client>-b<batch>-e<i>", so a batch's rows can be counted in the store.
For each batch the first 2xx answer is appended to ACK_FILE as one line
"BATCH ACCEPTED DUPLICATES" (flushed at once). A refused connection, a
reset, 429 and 503 are retried (after Retry-After, at most 1 s); any other
status is an error. Also used by bench/serve_bench.sh, which reads the
latency lines printed at the end ("latency_ms p50 p99").

All bodies are made (and compressed) before the first request, so the
timing printed at the end ("seconds S") is of the posting alone.

Every wait is bounded by HANG_GUARD seconds (default 900).
"""
import argparse
import gzip
import http.client
import json
import os
import random
import sys
import threading
import time

GUARD = float(os.environ.get("HANG_GUARD", "900"))


def batch_text(client, b, size):
    rnd = random.Random(b)
    lines = []
    for i in range(size):
        rows = []
        for _ in range(3):
            w = [rnd.random() + 0.05 for _ in range(3)]
            s = sum(w)
            rows.append([round(x / s, 5) for x in w])
            rows[-1][2] = round(1 - rows[-1][0] - rows[-1][1], 5)
        t = 1793491200 + (b * size + i) % (7 * 86400)
        lines.append(json.dumps({
            "id": "c%d-b%d-e%d" % (client, b, i),
            "ts": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(t)),
            "probs": rows,
        }, separators=(",", ":")))
    return ("\n".join(lines) + "\n").encode()


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("port_file", nargs="?")
    ap.add_argument("ack_file", nargs="?")
    ap.add_argument("--dump")
    ap.add_argument("--clients", type=int, default=4)
    ap.add_argument("--events", type=int, default=200000)
    ap.add_argument("--batch", type=int, default=1000)
    ap.add_argument("--model", default="d")
    ap.add_argument("--token")
    ap.add_argument("--level", type=int, default=6)
    a = ap.parse_args()
    n_batches = a.events // a.batch
    if a.dump:
        with open(a.dump, "wb") as f:
            for b in range(n_batches):
                f.write(batch_text(b % a.clients, b, a.batch))
        return
    bodies = {b: gzip.compress(batch_text(b % a.clients, b, a.batch), compresslevel=a.level)
              for b in range(n_batches)}
    start = time.monotonic()
    ack_lock = threading.Lock()
    ack = open(a.ack_file, "a")
    latencies = []
    errors = []

    def port():
        with open(a.port_file) as f:
            return int(f.read().strip() or 0)

    def client(c):
        headers = {"Content-Type": "application/x-ndjson", "Content-Encoding": "gzip"}
        if a.token:
            headers["Authorization"] = "Bearer " + a.token
        for b in range(c, n_batches, a.clients):
            body = bodies[b]
            while True:
                if time.monotonic() - start > GUARD:
                    errors.append("HANG: batch %d not answered with 2xx within %s s" % (b, GUARD))
                    return
                try:
                    t0 = time.monotonic()
                    conn = http.client.HTTPConnection("127.0.0.1", port(), timeout=GUARD)
                    conn.request("POST", "/v1/models/%s/events" % a.model, body=body,
                                 headers=headers)
                    r = conn.getresponse()
                    data = r.read()
                    conn.close()
                except (OSError, http.client.HTTPException, ValueError):
                    time.sleep(0.2)
                    continue
                if 200 <= r.status < 300:
                    d = json.loads(data)
                    with ack_lock:
                        latencies.append(time.monotonic() - t0)
                        ack.write("%d %d %d\n" % (b, d["accepted"], d["duplicates"]))
                        ack.flush()
                    break
                if r.status in (429, 503):
                    time.sleep(min(1.0, float(r.getheader("Retry-After", "1"))))
                    continue
                errors.append("batch %d: status %d: %s" % (b, r.status, data[:300]))
                return

    threads = [threading.Thread(target=client, args=(c,)) for c in range(a.clients)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    if errors:
        print("\n".join(errors), file=sys.stderr)
        sys.exit(1)
    latencies.sort()
    if latencies:
        p = lambda q: latencies[min(len(latencies) - 1, int(q * len(latencies)))] * 1000
        print("latency_ms %.1f %.1f" % (p(0.50), p(0.99)))
    print("seconds %.3f" % (time.monotonic() - start))


if __name__ == "__main__":
    main()
