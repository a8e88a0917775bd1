"""Shared pieces of the client's tests: the concord binary, a scripted HTTP
server on loopback, invented events."""

import gzip
import http.server
import json
import logging
import os
import random
import ssl
import subprocess
import threading
import unittest

HANG_GUARD = 300.0   # seconds; a wait that long means something hung

# the client's warnings are expected in these tests: kept off the test output
# (the tests that care read them with assertLogs)
logging.getLogger("concord_client").addHandler(logging.NullHandler())


def concord_bin():
    """Path of the built concord binary ($CONCORD_BIN, set by CTest), or skip."""
    path = os.environ.get("CONCORD_BIN")
    if not path or not os.access(path, os.X_OK):
        raise unittest.SkipTest("CONCORD_BIN is not set to the concord binary (CTest sets it)")
    return path


# a fixed clock for ingest, label and follow (README: CONCORD_NOW), so that
# label delays are the same in databases filled at different moments
CONCORD_NOW = "1764892800"      # 2025-12-05T00:00:00Z, after the invented events


def concord_env():
    return dict(os.environ, CONCORD_NOW=CONCORD_NOW)


def run_concord(*args, check=True, **kw):
    """Runs concord with a hang guard and the fixed clock; returns the CompletedProcess."""
    kw.setdefault("env", concord_env())
    proc = subprocess.run([concord_bin()] + [str(a) for a in args], capture_output=True,
                          timeout=HANG_GUARD, **kw)
    if check and proc.returncode != 0:
        raise AssertionError("concord %s: exit %d\n%s" % (" ".join(map(str, args)),
                                                          proc.returncode,
                                                          proc.stderr.decode(errors="replace")))
    return proc


def invented_events(n, members=3, classes=4, seed=1, day0=1764547200, label_every=3):
    """n invented events (id, probs, ts, label) spread over three UTC days from
    2025-12-01; probabilities are normalised random rows (not real data)."""
    rng = random.Random(seed)
    out = []
    for i in range(n):
        truth = rng.randrange(classes)
        probs = []
        for _ in range(members):
            row = [rng.random() + (2.0 if c == truth else 0.0) for c in range(classes)]
            s = sum(row)
            probs.append([round(v / s, 6) for v in row])
            probs[-1][-1] = round(1.0 - sum(probs[-1][:-1]), 6)
        ts = day0 + (i * 3 * 86400) // n
        label = truth if i % label_every == 0 else None
        out.append(("ev-%05d" % i, probs, ts, label))
    return out


def self_signed(directory):
    """A self-signed certificate for 127.0.0.1 made by openssl (cert, key), or skip."""
    cert, key = os.path.join(directory, "cert.pem"), os.path.join(directory, "key.pem")
    try:
        subprocess.run(["openssl", "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "2",
                        "-subj", "/CN=127.0.0.1", "-addext", "subjectAltName=IP:127.0.0.1",
                        "-keyout", key, "-out", cert], check=True, capture_output=True,
                       timeout=HANG_GUARD)
    except (OSError, subprocess.CalledProcessError) as e:
        raise unittest.SkipTest("openssl could not make a certificate: %s" % e)
    return cert, key


class Recorder(http.server.BaseHTTPRequestHandler):
    """Answers each POST from the server's script; records method, path,
    headers and the decoded body."""

    protocol_version = "HTTP/1.1"

    def log_message(self, *args):
        pass

    def do_GET(self):
        srv = self.server
        with srv.lock:
            srv.requests.append({"path": self.path, "headers": dict(self.headers),
                                 "raw": b"", "body": b""})
            status, headers, data = srv.get_answer
        self.send_response(status)
        for k, v in headers.items():
            self.send_header(k, v)
        self.send_header("Content-Length", str(len(data)))
        self.end_headers()
        self.wfile.write(data)

    def do_POST(self):
        length = int(self.headers.get("Content-Length", "0"))
        raw = self.rfile.read(length)
        body = gzip.decompress(raw) if self.headers.get("Content-Encoding") == "gzip" else raw
        srv = self.server
        with srv.lock:
            srv.requests.append({"path": self.path, "headers": dict(self.headers),
                                 "raw": raw, "body": body})
            step = srv.script.pop(0) if srv.script else (200, {}, None)
        status, headers, answer = step
        if answer is None:
            lines = body.count(b"\n")
            answer = {"accepted": lines, "duplicates": 0, "rejected": 0, "labels_set": 0,
                      "labels_pending": 0, "rejects": [], "rejects_truncated": False,
                      "committed": True}
        data = json.dumps(answer).encode()
        self.send_response(status)
        for k, v in headers.items():
            self.send_header(k, v)
        self.send_header("Content-Type", "application/json")
        self.send_header("Content-Length", str(len(data)))
        self.end_headers()
        self.wfile.write(data)


class ScriptedServer:
    """An HTTP server on 127.0.0.1 (free port) in a thread. `script` is a list of
    (status, headers, body-dict or None) answers taken in order; after it,
    every request gets 200 with all lines accepted. A GET is answered with
    get_answer: (status, headers, bytes)."""

    def __init__(self, script=(), tls=None):
        self.httpd = http.server.ThreadingHTTPServer(("127.0.0.1", 0), Recorder)
        if tls is not None:                  # (certfile, keyfile): HTTPS
            ctx = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
            ctx.load_cert_chain(*tls)
            self.httpd.socket = ctx.wrap_socket(self.httpd.socket, server_side=True)
        self.httpd.daemon_threads = True
        self.httpd.lock = threading.Lock()
        self.httpd.requests = []
        self.httpd.script = list(script)
        self.httpd.get_answer = (404, {}, b'{"error":{"status":404,"message":"no such path"}}')
        self.url = "%s://127.0.0.1:%d" % ("https" if tls else "http", self.httpd.server_address[1])
        self.thread = threading.Thread(target=self.httpd.serve_forever, daemon=True)
        self.thread.start()

    @property
    def requests(self):
        with self.httpd.lock:
            return list(self.httpd.requests)

    def answer_get(self, status, headers, data):
        with self.httpd.lock:
            self.httpd.get_answer = (status, headers, data)

    def stop(self):
        self.httpd.shutdown()
        self.httpd.server_close()
