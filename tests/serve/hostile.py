#!/usr/bin/env python3
"""hostile.py -- clients that misbehave, for serve_hostile.sh.

  hostile.py idle PORT N        N idle connections held open while a GET and
                                a POST on new connections are answered
  hostile.py slow_headers PORT  half a request line, then silence: prints
                                "closed" once the server drops the connection
  hostile.py slow_body PORT     a body trickled one byte every 0.3 s: prints
                                "closed" once the server drops it
  hostile.py no_length PORT     a POST with neither Content-Length nor
                                chunked transfer: prints the status code

Every wait is bounded by HANG_GUARD seconds (default 300): past it the
script prints what hung and exits 1.
"""
import http.client
import os
import socket
import sys
import time

GUARD = float(os.environ.get("HANG_GUARD", "300"))
AUTH = os.environ.get("TOKEN")


def headers(extra=None):
    h = {"Content-Type": "application/x-ndjson"}
    if AUTH:
        h["Authorization"] = "Bearer " + AUTH
    h.update(extra or {})
    return h


def wait_closed(s, what):
    s.settimeout(GUARD)
    try:
        while True:
            if not s.recv(65536):
                break
    except ConnectionResetError:
        pass
    except socket.timeout:
        print("HANG: the server kept the %s connection past %s s" % (what, GUARD))
        sys.exit(1)
    print("closed")


def main():
    mode, port = sys.argv[1], int(sys.argv[2])
    if mode == "idle":
        n = int(sys.argv[3])
        held = []
        for _ in range(n):
            s = socket.create_connection(("127.0.0.1", port), timeout=GUARD)
            held.append(s)
        c = http.client.HTTPConnection("127.0.0.1", port, timeout=GUARD)
        c.request("GET", "/v1/healthz", headers=headers())
        r = c.getresponse()
        r.read()
        body = b'{"id":"idle-1","ts":"2026-11-20T10:00:00Z","probs":[[0.5,0.5],[0.5,0.5]]}\n'
        c2 = http.client.HTTPConnection("127.0.0.1", port, timeout=GUARD)
        c2.request("POST", "/v1/models/idle/events", body=body, headers=headers())
        r2 = c2.getresponse()
        r2.read()
        print(r.status, r2.status)
        for s in held:
            s.close()
    elif mode == "slow_headers":
        s = socket.create_connection(("127.0.0.1", port), timeout=GUARD)
        s.sendall(b"POST /v1/models/slow/events HTTP/1.1\r\nHost: x\r\n")
        wait_closed(s, "slow-headers")
    elif mode == "slow_body":
        s = socket.create_connection(("127.0.0.1", port), timeout=GUARD)
        h = "".join("%s: %s\r\n" % kv for kv in headers({"Content-Length": "100000"}).items())
        s.sendall(("POST /v1/models/slow/events HTTP/1.1\r\nHost: x\r\n%s\r\n" % h).encode())
        start = time.monotonic()
        try:
            while time.monotonic() - start < GUARD:
                s.sendall(b" ")
                time.sleep(0.3)
        except (BrokenPipeError, ConnectionResetError):
            print("closed")
            return
        print("HANG: the server kept taking a trickled body past %s s" % GUARD)
        sys.exit(1)
    elif mode == "no_length":
        s = socket.create_connection(("127.0.0.1", port), timeout=GUARD)
        h = "".join("%s: %s\r\n" % kv for kv in headers().items())
        s.sendall(("POST /v1/models/x/events HTTP/1.1\r\nHost: x\r\n%s\r\n" % h).encode())
        data = s.recv(65536).decode("latin-1")
        print(data.split(" ")[1] if data else "none")
    else:
        sys.exit("unknown mode " + mode)


if __name__ == "__main__":
    main()
