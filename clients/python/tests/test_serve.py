"""The client against a real `concord serve` on a free loopback port with
tokens (skipped when the binary has no serve command): events logged through
the client give the same database figures as a file ingest of the same
events; duplicates, delayed labels (also before their events), refused
tokens, rejected lines, the model list and the report read back as dicts and
DataFrames."""

import json
import os
import re
import signal
import ssl
import subprocess
import tempfile
import time
import unittest
import urllib.request

import concord_client
from concord_client.http_sink import HttpSink, PermanentError
from support import (HANG_GUARD, concord_bin, concord_env, invented_events, run_concord,
                     self_signed)

MEMBERS = ["hue", "shape", "size"]
CLASSES = ["premium", "extra", "juice", "cull"]
WRITE_TOKEN = "w-token-for-tests-0123456789"
READ_TOKEN = "r-token-for-tests-9876543210"


def has_serve():
    proc = subprocess.run([concord_bin(), "serve", "--help"], capture_output=True,
                          timeout=HANG_GUARD)
    return proc.returncode == 0


class Server:
    """`concord serve` on 127.0.0.1, port 0 (the server picks a free one and
    says which), the write token from a file, the read token from the
    environment; stopped with SIGTERM."""

    def __init__(self, db, workdir, tls=None):
        token_file = os.path.join(workdir, "write.token")
        fd = os.open(token_file, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
        os.write(fd, (WRITE_TOKEN + "\n").encode())
        os.close(fd)
        env = concord_env()
        env.pop("CONCORD_WRITE_TOKEN", None)
        env["CONCORD_READ_TOKEN"] = READ_TOKEN
        self.err_path = os.path.join(workdir, "serve.err")
        with open(self.err_path, "wb") as err:
            self.proc = subprocess.Popen(
                [concord_bin(), "serve", "--db", db, "--listen", "127.0.0.1:0",
                 "--token-file", token_file]
                + (["--tls-cert", tls[0], "--tls-key", tls[1]] if tls else []),
                stdout=subprocess.DEVNULL, stderr=err, env=env)
        self.context = ssl.create_default_context(cafile=tls[0]) if tls else None
        self.url = self._wait_listening()
        self._wait_ready()

    def stderr(self):
        with open(self.err_path, "rb") as f:
            return f.read().decode(errors="replace")

    def _wait_listening(self):
        deadline = time.monotonic() + HANG_GUARD
        while time.monotonic() < deadline:
            m = re.search(r"listening on (https?://127\.0\.0\.1:[1-9][0-9]*) ", self.stderr())
            if m:
                return m.group(1)
            if self.proc.poll() is not None:
                raise AssertionError("concord serve exited %d: %s" % (self.proc.returncode,
                                                                      self.stderr()))
            time.sleep(0.05)
        raise AssertionError("hang guard: concord serve named no port in %d s" % HANG_GUARD)

    def _wait_ready(self):
        deadline = time.monotonic() + HANG_GUARD
        while time.monotonic() < deadline:
            try:
                with urllib.request.urlopen(self.url + "/v1/readyz", timeout=30,
                                            context=self.context) as r:
                    if r.status == 200:
                        return
            except OSError:
                pass
            time.sleep(0.1)
        raise AssertionError("hang guard: concord serve not ready after %d s" % HANG_GUARD)

    def stop(self):
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
        try:
            return self.proc.wait(HANG_GUARD)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
            raise AssertionError("hang guard: concord serve ignored SIGTERM for %d s" % HANG_GUARD)


class AgainstServe(unittest.TestCase):
    def setUp(self):
        concord_bin()
        if not has_serve():
            self.skipTest("this concord has no serve command")
        self.dir = tempfile.mkdtemp(prefix="concord-py-serve-")
        self.addCleanup(lambda: subprocess.run(["rm", "-rf", self.dir]))
        self.db = os.path.join(self.dir, "served.db")
        self.sent = invented_events(600, members=3, classes=4, seed=5)
        # the model is created with its names first, as an operator would
        first = os.path.join(self.dir, "first.jsonl")
        with open(first, "w") as f:
            f.write(json.dumps({"id": "seed", "ts": 1764547200, "probs": [[0.25] * 4] * 3}) + "\n")
        run_concord("ingest", "--db", self.db, "--model", "pack", "--classes", ",".join(CLASSES),
                    "--members", ",".join(MEMBERS), "--quiet", first)
        self.server = Server(self.db, self.dir)
        self.addCleanup(self.server.stop)

    def reference_db(self, inline_every=2):
        """The same events as one file (inline labels on every other labelled
        event, the rest as delayed labels), ingested by the binary."""
        ev = os.path.join(self.dir, "ref.jsonl")
        lab = os.path.join(self.dir, "ref-labels.jsonl")
        with open(ev, "w") as f, open(lab, "w") as g:
            f.write(json.dumps({"id": "seed", "ts": 1764547200, "probs": [[0.25] * 4] * 3}) + "\n")
            for n, (eid, probs, ts, label) in enumerate(self.sent):
                obj = {"id": eid, "ts": ts, "segment": "line-%d" % (n % 3), "probs": probs}
                if label is not None and n % inline_every == 0:
                    obj["label"] = label
                f.write(json.dumps(obj) + "\n")
                if label is not None and n % inline_every != 0:
                    g.write(json.dumps({"id": eid, "label": CLASSES[label]}) + "\n")
        db = os.path.join(self.dir, "ref.db")
        run_concord("ingest", "--db", db, "--model", "pack", "--classes", ",".join(CLASSES),
                    "--members", ",".join(MEMBERS), "--quiet", ev)
        run_concord("label", "--db", db, "--model", "pack", "--quiet", lab)
        return db

    def cli_report(self, db, by="day"):
        out = run_concord("report", "--db", db, "--model", "pack", "--by", by, "--format", "json")
        return json.loads(out.stdout)

    def logger(self, **kw):
        kw.setdefault("token", WRITE_TOKEN)
        kw.setdefault("batch_size", 64)
        kw.setdefault("flush_interval", 0.05)
        log = concord_client.Logger(self.server.url, "pack", timeout=HANG_GUARD, **kw)
        self.addCleanup(log.close, HANG_GUARD)
        return log

    def log_all(self, log, inline_every=2, labels_first=False):
        delayed = [(eid, CLASSES[label]) for n, (eid, _, _, label) in enumerate(self.sent)
                   if label is not None and n % inline_every != 0]
        if labels_first:
            for eid, name in delayed:
                log.label(eid, name)
            self.assertTrue(log.flush(HANG_GUARD))
        for n, (eid, probs, ts, label) in enumerate(self.sent):
            log.log(eid, probs, ts=ts, segment="line-%d" % (n % 3),
                    label=label if n % inline_every == 0 else None)
        if not labels_first:
            self.assertTrue(log.flush(HANG_GUARD))
            for eid, name in delayed:
                log.label(eid, name)
        self.assertTrue(log.flush(HANG_GUARD))
        return len(delayed)

    def test_logged_events_equal_a_file_ingest(self):
        log = self.logger()
        n_delayed = self.log_all(log)
        st = log.stats()
        self.assertEqual((st["accepted"], st["duplicates"], st["rejected"], st["failed"],
                          st["dropped"]), (600, 0, 0, 0, 0), log.last_error)
        self.assertEqual(st["labels_set"], n_delayed)
        ref = self.reference_db()
        for by in ("day", "all"):
            with self.subTest(by=by):
                self.assertEqual(self.cli_report(self.db, by), self.cli_report(ref, by))
        run_concord("verify", "--db", self.db, "--model", "pack")
        # the same report through the server, read with the read token
        served = concord_client.fetch_report(self.server.url, "pack", token=READ_TOKEN, by="day")
        self.assertEqual(served, self.cli_report(ref, "day"))
        # the same events again: all duplicates, nothing stored twice
        again = self.logger(batch_size=1000)
        for eid, probs, ts, label in self.sent[:100]:
            again.log(eid, probs, ts=ts)
        self.assertTrue(again.flush(HANG_GUARD))
        self.assertEqual((again.stats()["accepted"], again.stats()["duplicates"]), (0, 100))
        self.assertEqual(self.server.stop(), 0, self.server.stderr())
        self.assertEqual(self.cli_report(self.db, "all"), self.cli_report(ref, "all"))

    def test_labels_before_their_events(self):
        log = self.logger()
        n_delayed = self.log_all(log, labels_first=True)
        st = log.stats()
        self.assertEqual(st["labels_pending"], n_delayed)
        self.assertEqual(st["accepted"], 600)
        self.assertEqual(self.cli_report(self.db, "all"), self.cli_report(self.reference_db(), "all"))

    def test_tokens_are_checked(self):
        for token, status in ((None, 401), ("wrong-token", 403), (READ_TOKEN, 403)):
            with self.subTest(token=token):
                old = os.environ.pop("CONCORD_TOKEN", None)
                try:
                    log = self.logger(token=token) if token else concord_client.Logger(
                        self.server.url, "pack", timeout=HANG_GUARD)
                finally:
                    if old is not None:
                        os.environ["CONCORD_TOKEN"] = old
                self.addCleanup(log.close, HANG_GUARD)
                log.log("t1", [[0.25] * 4] * 3, ts=1764547200)
                self.assertTrue(log.flush(HANG_GUARD))
                self.assertEqual(log.stats()["failed"], 1)
                self.assertTrue(log.last_error.startswith("HTTP %d" % status), log.last_error)
        with self.assertRaises(PermanentError) as cm:
            concord_client.fetch_report(self.server.url, "pack", token="wrong-token")
        self.assertEqual(cm.exception.status, 403)

    def test_rejected_lines_are_reported_per_line(self):
        sink = HttpSink(self.server.url, token=WRITE_TOKEN, timeout=HANG_GUARD)
        good = json.dumps({"id": "g1", "ts": 1764547200, "probs": [[0.25] * 4] * 3}) + "\n"
        bad = json.dumps({"id": "b1", "ts": 1764547200, "probs": [[0.5, 0.5]] * 3}) + "\n"
        answer = sink.send("pack", "event", [good.encode(), bad.encode()])
        self.assertEqual((answer["accepted"], answer["rejected"]), (1, 1))
        self.assertEqual(answer["rejects"][0]["line"], 2)
        self.assertTrue(answer["committed"])
        # strict=true: all or nothing
        strict = HttpSink(self.server.url, token=WRITE_TOKEN, timeout=HANG_GUARD, strict=True)
        good2 = good.replace('"g1"', '"g2"')
        answer = strict.send("pack", "event", [good2.encode(), bad.encode()])
        self.assertEqual((answer["accepted"], answer["rejected"]), (0, 1))
        self.assertEqual(self.cli_report(self.db, "all")["windows"][0]["events"], 2)   # seed, g1

    def test_models_and_frames(self):
        log = self.logger()
        self.log_all(log)
        models = concord_client.list_models(self.server.url, token=READ_TOKEN)
        self.assertIn({"name": "pack", "members": MEMBERS, "classes": CLASSES},
                      [{k: m.get(k) for k in ("name", "members", "classes")} for m in models])
        try:
            import pandas  # noqa: F401
        except ImportError:
            self.skipTest("pandas is not installed (Debian: python3-pandas)")
        report = concord_client.fetch_report(self.server.url, "pack", token=READ_TOKEN, by="day")
        frame = concord_client.windows_frame(report)
        self.assertEqual(len(frame), len(report["windows"]))
        for i, w in enumerate(report["windows"]):
            self.assertEqual(frame["events"].iloc[i], w["events"])
            self.assertEqual(frame["accuracy.members[size]"].iloc[i], w["accuracy"]["members"][2])
            self.assertEqual(frame["uncertainty.mutual_information"].iloc[i],
                             w["uncertainty"]["mutual_information"])
        single = concord_client.fetch_report(self.server.url, "pack", token=READ_TOKEN, by="all")
        kappa = concord_client.pair_frames(single)["kappa"]
        self.assertEqual(list(kappa.columns), MEMBERS)
        self.assertEqual(kappa.loc["hue", "size"], single["windows"][0]["diversity"]["kappa"]["pairs"][0][2])


    def test_https(self):
        self.server.stop()
        cert, key = self_signed(self.dir)
        try:
            self.server = Server(self.db, self.dir, tls=(cert, key))
        except AssertionError as e:
            if "TLS" in str(e) or "tls" in str(e):
                self.skipTest("this concord serve has no TLS: %s" % e)
            raise
        self.addCleanup(self.server.stop)
        self.assertTrue(self.server.url.startswith("https://"))
        log = self.logger(cafile=cert)
        for eid, probs, ts, label in self.sent[:50]:
            log.log(eid, probs, ts=ts)
        self.assertTrue(log.flush(HANG_GUARD))
        self.assertEqual(log.stats()["accepted"], 50, log.last_error)
        report = concord_client.fetch_report(self.server.url, "pack", token=READ_TOKEN, by="all",
                                             cafile=cert)
        self.assertEqual(report["windows"][0]["events"], 51)


if __name__ == "__main__":
    unittest.main()
