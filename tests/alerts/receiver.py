#!/usr/bin/env python3
"""receiver.py - a webhook receiver for the alert tests, on loopback only.

Listens on 127.0.0.1 (a random free port unless --port is given), writes the
port to --port-file once it listens, appends each POST as one JSON line
{"path", "headers", "body", "answered"} to --log, answers as --mode says, and
exits by itself after --lifetime seconds.

modes: ok (200), status:N (answers N), hang (never answers), slow:S (records,
waits S seconds, then 200). --tls-cert/--tls-key serve HTTPS with that
certificate.
"""
import argparse
import http.server
import json
import os
import threading
import time

parser = argparse.ArgumentParser()
parser.add_argument("--mode", default="ok")
parser.add_argument("--log", required=True)
parser.add_argument("--port-file", required=True)
parser.add_argument("--port", type=int, default=0)
parser.add_argument("--lifetime", type=float, default=60.0)
parser.add_argument("--tls-cert")
parser.add_argument("--tls-key")
args = parser.parse_args()

deadline = time.monotonic() + args.lifetime
lock = threading.Lock()


def record(handler, body, answered):
    entry = {"path": handler.path, "headers": {k.lower(): v for k, v in handler.headers.items()},
             "body": body.decode("utf-8"), "answered": answered}
    with lock, open(args.log, "a", encoding="utf-8") as f:
        f.write(json.dumps(entry) + "\n")


class Handler(http.server.BaseHTTPRequestHandler):
    def do_POST(self):
        body = self.rfile.read(int(self.headers.get("Content-Length", "0")))
        mode = args.mode
        if mode == "hang":
            record(self, body, False)
            while time.monotonic() < deadline:
                time.sleep(0.1)
            return
        if mode.startswith("slow:"):
            record(self, body, True)
            time.sleep(float(mode[5:]))
            status = 200
        else:
            status = int(mode[7:]) if mode.startswith("status:") else 200
            record(self, body, True)
        try:
            self.send_response(status)
            if status in (301, 302, 307, 308):
                self.send_header("Location", "http://127.0.0.1:1/elsewhere")
            self.send_header("Content-Length", "2")
            self.end_headers()
            self.wfile.write(b"ok")
        except (BrokenPipeError, ConnectionResetError):
            pass  # the sender went away (the crash test kills it on purpose)

    def log_message(self, fmt, *a):
        pass


server = http.server.ThreadingHTTPServer(("127.0.0.1", args.port), Handler)
server.daemon_threads = True
if args.tls_cert:
    import ssl
    ctx = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
    ctx.load_cert_chain(args.tls_cert, args.tls_key)
    server.socket = ctx.wrap_socket(server.socket, server_side=True)
server.timeout = 0.1
with open(args.port_file + ".tmp", "w") as f:
    f.write(str(server.server_address[1]))
os.rename(args.port_file + ".tmp", args.port_file)
while time.monotonic() < deadline:
    server.handle_request()
server.server_close()
