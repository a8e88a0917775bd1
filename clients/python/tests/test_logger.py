"""The logger against a scripted HTTP server on loopback and against fake sinks:
batching, gzip bodies, headers, retries with backoff, Retry-After, permanent
errors, splitting on 413, the drop-oldest bound, flush, close and threads."""

import gzip
import json
import os
import shutil
import subprocess
import sys
import tempfile
import threading
import time
import unittest

import concord_client
from concord_client import events
from support import HANG_GUARD, ScriptedServer, invented_events, self_signed

P = [[0.7, 0.2, 0.1], [0.6, 0.3, 0.1]]


def lines_of(requests):
    out = []
    for r in requests:
        out.extend(json.loads(l) for l in r["body"].splitlines())
    return out


class AgainstScriptedServer(unittest.TestCase):
    def server(self, script=()):
        srv = ScriptedServer(script)
        self.addCleanup(srv.stop)
        return srv

    def logger(self, url, **kw):
        kw.setdefault("flush_interval", 3600.0)     # only full batches and flush() send
        log = concord_client.Logger(url, "grader/α", **kw)
        self.addCleanup(log.close, HANG_GUARD)
        return log

    def test_batches_gzip_headers_and_counts(self):
        srv = self.server()
        log = self.logger(srv.url, token="s3cret", batch_size=10)
        sent = invented_events(25)
        for eid, probs, ts, label in sent:
            log.log(eid, probs, ts=ts, label=label, segment="line-1")
        self.assertTrue(log.flush(HANG_GUARD))
        reqs = srv.requests
        self.assertEqual([r["body"].count(b"\n") for r in reqs], [10, 10, 5])
        for r in reqs:
            self.assertEqual(r["path"], "/v1/models/grader%2F%CE%B1/events")
            h = {k.lower(): v for k, v in r["headers"].items()}
            self.assertEqual(h["content-type"], "application/x-ndjson")
            self.assertEqual(h["content-encoding"], "gzip")
            self.assertEqual(h["authorization"], "Bearer s3cret")
            self.assertEqual(gzip.decompress(r["raw"]), r["body"])   # RFC 1952 member
        # the decoded bodies are exactly the events logged, in order
        expected = [json.loads(events.encode_event(e, p, t, l, "line-1")) for e, p, t, l in sent]
        self.assertEqual(lines_of(reqs), expected)
        st = log.stats()
        self.assertEqual((st["logged"], st["accepted"], st["batches"], st["dropped"], st["failed"]),
                         (25, 25, 3, 0, 0))

    def test_numpy_arrays_arrive_exactly(self):
        try:
            import numpy as np
        except ImportError:
            self.skipTest("numpy is not installed (Debian: python3-numpy)")
        srv = self.server()
        log = self.logger(srv.url)
        rng = np.random.default_rng(3)
        arrays = []
        for i in range(20):
            a = rng.dirichlet(np.ones(6), size=5).astype(np.float32 if i % 2 else np.float64)
            arrays.append(a)
            log.log("np-%d" % i, a, ts=np.int64(1764547200 + i), label=np.int32(i % 6))
        self.assertTrue(log.flush(HANG_GUARD))
        got = lines_of(srv.requests)
        for a, line in zip(arrays, got):
            # the JSON numbers parse back to the very same floats (float32 or float64)
            self.assertEqual(np.array(line["probs"], dtype=a.dtype).tobytes(), a.tobytes())
        self.assertEqual([l["label"] for l in got], [i % 6 for i in range(20)])
        self.assertEqual(got[19]["ts"], 1764547219)

    def test_interval_sends_without_flush(self):
        srv = self.server()
        log = self.logger(srv.url, batch_size=1000, flush_interval=0.05)
        log.log("a", P, ts=1764547200)
        deadline = time.monotonic() + HANG_GUARD
        while not srv.requests and time.monotonic() < deadline:
            time.sleep(0.02)
        self.assertEqual(len(srv.requests), 1, "no batch sent after flush_interval")

    def test_token_from_environment(self):
        srv = self.server()
        old = os.environ.get("CONCORD_TOKEN")
        os.environ["CONCORD_TOKEN"] = "from-env"
        try:
            log = self.logger(srv.url)
        finally:
            if old is None:
                del os.environ["CONCORD_TOKEN"]
            else:
                os.environ["CONCORD_TOKEN"] = old
        log.log("a", P, ts=1764547200)
        log.flush(HANG_GUARD)
        self.assertEqual(srv.requests[0]["headers"]["Authorization"], "Bearer from-env")

    def test_429_and_503_then_200(self):
        srv = self.server([(429, {"Retry-After": "1"}, {"error": {"status": 429, "message": "queue full"}}),
                           (503, {}, {"error": {"status": 503, "message": "starting"}})])
        log = self.logger(srv.url, backoff_base=0.01, backoff_cap=0.05)
        for eid, probs, ts, label in invented_events(5):
            log.log(eid, probs, ts=ts)
        t0 = time.monotonic()
        self.assertTrue(log.flush(HANG_GUARD))
        reqs = srv.requests
        self.assertEqual(len(reqs), 3)
        self.assertEqual(reqs[0]["body"], reqs[1]["body"])
        self.assertEqual(reqs[1]["body"], reqs[2]["body"])
        st = log.stats()
        self.assertEqual((st["retries"], st["accepted"], st["failed"]), (2, 5, 0))
        # the first wait honours Retry-After: 1 (RFC 9110 §10.2.3), the second is jitter
        # below the cap of 0.05 s
        self.assertGreaterEqual(log._waits[0], 1.0)
        self.assertLessEqual(log._waits[1], 0.05)
        self.assertGreaterEqual(time.monotonic() - t0, 1.0)

    def test_gives_up_after_max_attempts(self):
        srv = self.server([(503, {}, None)] * 3)
        log = self.logger(srv.url, max_attempts=3, backoff_base=0.001, backoff_cap=0.002)
        log.log("a", P, ts=1764547200)
        self.assertTrue(log.flush(HANG_GUARD))
        st = log.stats()
        self.assertEqual((len(srv.requests), st["retries"], st["failed"], st["accepted"]), (3, 2, 1, 0))
        self.assertIn("HTTP 503", log.last_error)

    def test_permanent_errors_are_not_retried(self):
        for status in (400, 401, 403, 404, 415):
            with self.subTest(status=status):
                srv = self.server([(status, {}, {"error": {"status": status, "message": "no %d" % status}})])
                log = self.logger(srv.url, backoff_base=0.001)
                log.log("a", P, ts=1764547200)
                with self.assertLogs("concord_client", "WARNING") as logs:
                    self.assertTrue(log.flush(HANG_GUARD))
                self.assertEqual(logs.output, ["WARNING:concord_client:concord logger gave up "
                                               "on 1 lines: HTTP %d: no %d" % (status, status)])
                self.assertEqual(len(srv.requests), 1)
                self.assertEqual(log.stats()["failed"], 1)
                self.assertEqual(log.last_error, "HTTP %d: no %d" % (status, status))

    def test_413_splits_the_batch(self):
        srv = self.server([(413, {}, None), (413, {}, None)])
        log = self.logger(srv.url)
        for i in range(8):
            log.log("e%d" % i, P, ts=1764547200)
        self.assertTrue(log.flush(HANG_GUARD))
        sizes = [r["body"].count(b"\n") for r in srv.requests]
        self.assertEqual(sizes, [8, 4, 2, 2, 4])
        self.assertEqual([l["id"] for l in lines_of(srv.requests[2:])], ["e%d" % i for i in range(8)])
        self.assertEqual(log.stats()["accepted"], 8)

    def test_rejects_are_counted_and_kept(self):
        answer = {"accepted": 1, "duplicates": 1, "rejected": 1, "labels_set": 0, "labels_pending": 0,
                  "rejects": [{"line": 3, "reason": "probs: 2 members, model has 3"}],
                  "rejects_truncated": False, "committed": True}
        srv = self.server([(200, {}, answer)])
        log = self.logger(srv.url)
        for i in range(3):
            log.log("e%d" % i, P, ts=1764547200)
        log.flush(HANG_GUARD)
        st = log.stats()
        self.assertEqual((st["accepted"], st["duplicates"], st["rejected"]), (1, 1, 1))
        self.assertEqual(log.last_rejects[0]["reason"], "probs: 2 members, model has 3")
        self.assertEqual(json.loads(log.last_rejects[0]["line"])["id"], "e2")

    def test_labels_go_to_their_endpoint_after_their_events(self):
        srv = self.server()
        log = self.logger(srv.url)
        log.log("a", P, ts=1764547200)
        log.label("a", 2)
        log.label("b", "cull")
        log.log("c", P, ts=1764547200)
        log.flush(HANG_GUARD)
        got = [(r["path"].rsplit("/", 1)[1], r["body"]) for r in srv.requests]
        self.assertEqual([g[0] for g in got], ["events", "labels", "events"])
        self.assertEqual([json.loads(l) for l in got[1][1].splitlines()],
                         [{"id": "a", "label": 2}, {"id": "b", "label": "cull"}])
        with self.assertRaises(ValueError):
            log.label("a", 3)            # K = 3 classes here

    def test_https_with_own_certificate_authority(self):
        tmp = tempfile.mkdtemp(prefix="concord-py-tls-")
        self.addCleanup(shutil.rmtree, tmp)
        cert, key = self_signed(tmp)
        srv = ScriptedServer(tls=(cert, key))
        self.addCleanup(srv.stop)
        # not trusted by the system: refused at once, not retried
        log = self.logger(srv.url, backoff_base=0.001)
        log.log("a", P, ts=1764547200)
        self.assertTrue(log.flush(HANG_GUARD))
        self.assertEqual((log.stats()["failed"], log.stats()["retries"]), (1, 0))
        self.assertIn("TLS certificate", log.last_error)
        # trusted through cafile=
        log = self.logger(srv.url, cafile=cert)
        log.log("b", P, ts=1764547200)
        self.assertTrue(log.flush(HANG_GUARD))
        self.assertEqual(log.stats()["accepted"], 1, log.last_error)
        self.assertEqual([l["id"] for l in lines_of(srv.requests)], ["b"])
        srv.answer_get(200, {}, b'{"models": [{"name": "m", "members": ["x"], "classes": ["a", "b"]}]}')
        self.assertEqual(concord_client.list_models(srv.url, cafile=cert)[0]["name"], "m")

    def test_unreachable_server_is_retried_then_given_up(self):
        srv = self.server()
        url = srv.url
        srv.stop()                       # nothing listens there now
        log = self.logger(url, max_attempts=2, backoff_base=0.001, timeout=5)
        log.log("a", P, ts=1764547200)
        self.assertTrue(log.flush(HANG_GUARD))
        self.assertEqual(log.stats()["failed"], 1)
        self.assertIn("no answer from", log.last_error)


class BlockingSink:
    """A sink whose send() waits until released; records what it got."""

    def __init__(self):
        self.release = threading.Event()
        self.entered = threading.Event()
        self.got = []

    def send(self, model, kind, lines):
        self.entered.set()
        if not self.release.wait(HANG_GUARD):
            raise AssertionError("BlockingSink never released")
        self.got.append(list(lines))
        return {"accepted": len(lines)}

    def close(self):
        pass


class BufferAndThreads(unittest.TestCase):
    def test_full_buffer_drops_oldest_and_counts(self):
        sink = BlockingSink()
        log = concord_client.Logger(sink, "m", batch_size=2, max_buffer=5, flush_interval=3600)
        self.addCleanup(log.close, HANG_GUARD)
        self.addCleanup(sink.release.set)
        log.log("e0", P, ts=1764547200)
        log.log("e1", P, ts=1764547200)              # a full batch: the thread takes e0, e1
        self.assertTrue(sink.entered.wait(HANG_GUARD))
        for i in range(2, 12):                       # 10 more while the sink hangs
            log.log("e%d" % i, P, ts=1764547200)     # never blocks
        st = log.stats()
        self.assertEqual((st["buffered"], st["dropped"]), (5, 5))
        sink.release.set()
        self.assertTrue(log.flush(HANG_GUARD))
        ids = [json.loads(l)["id"] for batch in sink.got for l in batch]
        # the in-flight batch, then the 5 newest; e2..e6 were dropped
        self.assertEqual(ids, ["e0", "e1", "e7", "e8", "e9", "e10", "e11"])
        self.assertEqual(log.stats()["accepted"], 7)

    def test_byte_bound_drops_oldest_too(self):
        sink = BlockingSink()
        log = concord_client.Logger(sink, "m", batch_size=1, max_buffer=1000,
                                    max_buffer_bytes=1000, flush_interval=3600)
        self.addCleanup(log.close, HANG_GUARD)
        self.addCleanup(sink.release.set)            # runs first, should a check fail
        log.log("e00", P, ts=1764547200)                 # taken by the thread at once
        self.assertTrue(sink.entered.wait(HANG_GUARD))
        size = len(events.encode_event("e01", P, 1764547200, model="m"))   # lines name the model
        for i in range(1, 31):
            log.log("e%02d" % i, P, ts=1764547200)
        st = log.stats()
        self.assertEqual(st["buffered"], 1000 // size)
        self.assertEqual(st["dropped"], 30 - 1000 // size)
        sink.release.set()
        self.assertTrue(log.flush(HANG_GUARD))
        ids = [json.loads(l)["id"] for batch in sink.got for l in batch]
        self.assertEqual(ids, ["e00"] + ["e%02d" % i for i in range(31 - 1000 // size, 31)])

    def test_flush_times_out_and_close_counts_unsent(self):
        sink = BlockingSink()
        log = concord_client.Logger(sink, "m", flush_interval=0.0)
        log.log("a", P, ts=1764547200)
        self.assertTrue(sink.entered.wait(HANG_GUARD))
        log.log("b", P, ts=1764547200)
        self.assertFalse(log.flush(0.05))
        closer = threading.Thread(target=log.close, args=(0.05,))
        closer.start()
        sink.release.set()
        closer.join(HANG_GUARD)
        self.assertFalse(closer.is_alive())
        log._thread.join(HANG_GUARD)      # close() may leave a slow batch to the thread
        st = log.stats()
        self.assertEqual(st["accepted"] + st["unsent_at_close"], 2)
        with self.assertRaises(RuntimeError):
            log.log("c", P, ts=1764547200)

    def test_many_threads_lose_nothing(self):
        srv = ScriptedServer()
        self.addCleanup(srv.stop)
        log = concord_client.Logger(srv.url, "m", batch_size=50, flush_interval=0.01)
        self.addCleanup(log.close, HANG_GUARD)

        def worker(t):
            for i in range(200):
                log.log("t%d-%d" % (t, i), P, ts=1764547200)
        threads = [threading.Thread(target=worker, args=(t,)) for t in range(8)]
        for t in threads:
            t.start()
        for t in threads:
            t.join(HANG_GUARD)
        self.assertTrue(log.flush(HANG_GUARD))
        ids = [l["id"] for l in lines_of(srv.requests)]
        self.assertEqual(len(ids), 1600)
        self.assertEqual(set(ids), {"t%d-%d" % (t, i) for t in range(8) for i in range(200)})
        self.assertEqual(log.stats()["accepted"], 1600)

    def test_bad_event_raises_and_queues_nothing(self):
        sink = BlockingSink()
        sink.release.set()
        log = concord_client.Logger(sink, "m")
        self.addCleanup(log.close, HANG_GUARD)
        log.log("a", P, ts=1764547200)
        with self.assertRaises(ValueError):
            log.log("b", [[0.5, 0.5], [0.5, 0.5]], ts=1764547200)   # 2 x 2 after 2 x 3
        with self.assertRaises(ValueError):
            log.log("c", [[0.7, 0.2, float("nan")], [0.6, 0.3, 0.1]])
        with self.assertRaises(TypeError):
            log.log("d", P, logits=P)
        with self.assertRaises(TypeError):
            log.log("e")
        log.log("f", logits=[[2.0, 0.0, -1.0], [0.5, 0.5, 9.0]], ts=1764547200)
        log.flush(HANG_GUARD)
        self.assertEqual(log.stats()["logged"], 2)
        got = [json.loads(l) for batch in sink.got for l in batch]
        self.assertEqual(got[1]["logits"], [[2.0, 0.0, -1.0], [0.5, 0.5, 9.0]])
        self.assertNotIn("probs", got[1])

    def test_flush_at_interpreter_exit(self):
        srv = ScriptedServer()
        self.addCleanup(srv.stop)
        here = os.path.dirname(os.path.dirname(os.path.abspath(concord_client.__file__)))
        code = ("import concord_client\n"
                "log = concord_client.Logger(%r, 'm', flush_interval=3600, exit_timeout=120)\n"
                "for i in range(7):\n"
                "    log.log('x%%d' %% i, [[0.5, 0.5]], ts=1764547200)\n" % srv.url)
        subprocess.run([sys.executable, "-c", code], check=True, timeout=HANG_GUARD,
                       env=dict(os.environ, PYTHONPATH=here))
        self.assertEqual([l["id"] for l in lines_of(srv.requests)], ["x%d" % i for i in range(7)])


if __name__ == "__main__":
    unittest.main()
