"""The rotating JSON Lines sink: names in writing order, rotation by size and
by age, complete lines only, and the files read back by the real `concord
ingest`, `concord label` and `concord follow`."""

import glob
import json
import os
import signal
import sqlite3
import subprocess
import tempfile
import time
import unittest

import concord_client
from concord_client.file_sink import FileSink
from support import HANG_GUARD, concord_bin, concord_env, invented_events, run_concord


def read_lines(paths):
    out = []
    for p in paths:
        with open(p, "rb") as f:
            data = f.read()
        assert data == b"" or data.endswith(b"\n"), "%s ends inside a line" % p
        out.extend(json.loads(l) for l in data.splitlines())
    return out


class Clock:
    def __init__(self, t):
        self.t = t

    def __call__(self):
        return self.t


class Rotation(unittest.TestCase):
    def setUp(self):
        self.dir = tempfile.mkdtemp(prefix="concord-py-")
        self.addCleanup(lambda: subprocess.run(["rm", "-rf", self.dir]))

    def test_size_rotation_keeps_order_and_whole_lines(self):
        sink = FileSink(self.dir, "pred", max_bytes=1000, max_seconds=1e9)
        lines = [(json.dumps({"id": "e%03d" % i, "pad": "x" * (i % 50)}) + "\n").encode()
                 for i in range(200)]
        for i in range(0, 200, 3):
            sink.send("m", "event", lines[i:i + 3])
        sink.close()
        rotated = sink.rotated_paths("event")
        self.assertGreater(len(rotated), 5)
        for p in rotated:
            self.assertLessEqual(os.path.getsize(p), 1000)
        # the shell's sorted glob gives the writing order, the active file last
        every = sorted(glob.glob(os.path.join(self.dir, "pred.*jsonl")))
        self.assertEqual(every, rotated + [sink.active_path("event")])
        self.assertEqual([l["id"] for l in read_lines(every)], ["e%03d" % i for i in range(200)])

    def test_age_rotation_and_numbering_across_runs(self):
        clock = Clock(1764547200.0)
        sink = FileSink(self.dir, "pred", max_seconds=60, clock=clock)
        sink.send("m", "event", [b'{"id":"a"}\n'])
        clock.t += 59
        sink.send("m", "event", [b'{"id":"b"}\n'])
        self.assertEqual(sink.rotated_paths("event"), [])
        clock.t += 1
        sink.send("m", "event", [b'{"id":"c"}\n'])
        sink.send("m", "label", [b'{"id":"a","label":1}\n'])
        sink.close()
        (first,) = sink.rotated_paths("event")
        self.assertEqual(os.path.basename(first), "pred.00000001.20251201T000100Z.jsonl")
        # a new sink on the same folder goes on numbering after the files there,
        # and a left active file's age counts from its last write
        os.utime(sink.active_path("label"), (clock.t, clock.t))
        sink2 = FileSink(self.dir, "pred", max_seconds=60, clock=clock)
        clock.t += 3600
        sink2.send("m", "label", [b'{"id":"b","label":2}\n'])
        sink2.close()
        self.assertEqual([os.path.basename(p) for p in sink2.rotated_paths("label")],
                         ["pred-labels.00000002.20251201T010100Z.jsonl"])
        self.assertEqual(read_lines(sink2.rotated_paths("label") + [sink2.active_path("label")]),
                         [{"id": "a", "label": 1}, {"id": "b", "label": 2}])

    def test_failed_write_leaves_no_partial_line(self):
        sink = FileSink(self.dir, "pred")
        sink.send("m", "event", [b'{"id":"a"}\n'])
        fd = sink._files["event"][0]
        real_write = os.write

        def half_write(f, data):           # a write cut short (a full disk)
            return real_write(f, data[:len(data) // 2])
        os.write = half_write
        try:
            with self.assertRaises(OSError):
                sink.send("m", "event", [b'{"id":"b"}\n', b'{"id":"c"}\n'])
        finally:
            os.write = real_write
        self.assertEqual(os.fstat(fd).st_size, len(b'{"id":"a"}\n'))
        sink.send("m", "event", [b'{"id":"d"}\n'])
        sink.close()
        self.assertEqual(read_lines([sink.active_path("event")]), [{"id": "a"}, {"id": "d"}])

    def test_prefix_checked(self):
        for bad in ("", "../x", "a/b", ".hidden"):
            with self.subTest(prefix=bad):
                self.assertRaises(ValueError, FileSink, self.dir, bad)


def db_count(db, sql="SELECT count(*) FROM events"):
    if not os.path.exists(db):
        return 0
    con = sqlite3.connect("file:%s?mode=ro" % db, uri=True, timeout=60)
    try:
        return con.execute(sql).fetchone()[0]
    except sqlite3.OperationalError:
        return 0
    finally:
        con.close()


def wait_until(what, predicate):
    deadline = time.monotonic() + HANG_GUARD
    while not predicate():
        if time.monotonic() > deadline:
            raise AssertionError("hang guard: %s not reached in %d s" % (what, HANG_GUARD))
        time.sleep(0.1)


class ReadBackByConcord(unittest.TestCase):
    """Files written by the file logger equal a direct file of the same events."""

    def setUp(self):
        concord_bin()
        self.dir = tempfile.mkdtemp(prefix="concord-py-")
        self.addCleanup(lambda: subprocess.run(["rm", "-rf", self.dir]))
        self.sent = invented_events(300)

    def reference_db(self):
        """The same events written as one file by hand, ingested, labels applied."""
        ref = os.path.join(self.dir, "ref.jsonl")
        labels = os.path.join(self.dir, "ref-labels.jsonl")
        with open(ref, "w") as f, open(labels, "w") as g:
            for eid, probs, ts, label in self.sent:
                f.write(json.dumps({"id": eid, "ts": ts, "probs": probs}) + "\n")
                if label is not None:
                    g.write(json.dumps({"id": eid, "label": label}) + "\n")
        db = os.path.join(self.dir, "ref.db")
        run_concord("ingest", "--db", db, "--model", "pack", "--quiet", ref)
        run_concord("label", "--db", db, "--model", "pack", "--quiet", labels)
        return db

    def report(self, db):
        out = run_concord("report", "--db", db, "--model", "pack", "--by", "all", "--format", "json")
        return json.loads(out.stdout)

    def log_all(self, log, between=None):
        for n, (eid, probs, ts, label) in enumerate(self.sent):
            log.log(eid, probs, ts=ts)
            if between and n % 100 == 99:
                between(n + 1)
        for eid, probs, ts, label in self.sent:
            if label is not None:
                log.label(eid, label)

    def test_ingest_of_rotated_files(self):
        log = concord_client.file_logger(self.dir, "pack", prefix="pred", max_bytes=4096,
                                         batch_size=7, flush_interval=0.01)
        self.log_all(log)
        self.assertTrue(log.close(HANG_GUARD))
        files = sorted(glob.glob(os.path.join(self.dir, "pred.*jsonl")))
        self.assertGreater(len(files), 10)
        db = os.path.join(self.dir, "py.db")
        # each line names the model, so no --model is needed
        run_concord("ingest", "--db", db, "--quiet", *files)
        run_concord("label", "--db", db, "--quiet",
                    *sorted(glob.glob(os.path.join(self.dir, "pred-labels.*jsonl"))))
        self.assertEqual(db_count(db), 300)
        self.assertEqual(self.report(db), self.report(self.reference_db()))

    def test_every_kind_of_field_is_accepted_by_ingest(self):
        """logits, class-name labels, segments, datetimes and RFC 3339 strings
        as the logger writes them: concord refuses none."""
        import datetime
        log = concord_client.file_logger(self.dir, "pack", prefix="kinds")
        utc = datetime.timezone.utc
        log.log("k1", logits=[[2.0, 0.5], [-1.0, 3.0]], ts=1764547200.25, segment="cam-é")
        log.log("k2", [[0.5, 0.5], [0.1, 0.9]], ts=datetime.datetime(2025, 12, 2, tzinfo=utc), label=1)
        log.log("k3", [[1, 0], [0, 1]], ts="2025-12-03T10:00:00+02:00", label="b")
        self.assertTrue(log.close(HANG_GUARD))
        db = os.path.join(self.dir, "k.db")
        proc = run_concord("ingest", "--db", db, "--classes", "a,b",
                           os.path.join(self.dir, "kinds.jsonl"))
        self.assertIn(b"3 events stored, 0 duplicates skipped, 0 rejected", proc.stderr)
        self.assertEqual(db_count(db), 3)
        self.assertEqual(db_count(db, "SELECT count(*) FROM events WHERE label = 1"), 2)

    def test_follow_across_rotations(self):
        db = os.path.join(self.dir, "follow.db")
        log = concord_client.file_logger(self.dir, "pack", prefix="pred", batch_size=10,
                                         flush_interval=0.01)
        sink = log.sink
        follow = subprocess.Popen(
            [concord_bin(), "follow", "--db", db, "--interval", "50", "--chunk", "40",
             "--labels", sink.active_path("label"), sink.active_path("event")],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=concord_env())
        try:
            def rotate(n):
                # every 100 events: wait until follow has them, then rotate
                self.assertTrue(log.flush(HANG_GUARD))
                wait_until("%d events in follow's database" % n, lambda: db_count(db) >= n)
                sink.rotate_now()
            self.log_all(log, between=rotate)
            self.assertTrue(log.flush(HANG_GUARD))
            labelled = sum(1 for e in self.sent if e[3] is not None)
            wait_until("300 events and %d labels" % labelled,
                       lambda: db_count(db) == 300 and
                       db_count(db, "SELECT count(*) FROM events WHERE label IS NOT NULL") == labelled)
        finally:
            follow.send_signal(signal.SIGTERM)
            out, err = follow.communicate(timeout=HANG_GUARD)
        self.assertEqual(follow.returncode, 0, err.decode(errors="replace"))
        log.close(HANG_GUARD)
        self.assertEqual(len(sink.rotated_paths("event")), 3)
        self.assertEqual(self.report(db), self.report(self.reference_db()))


if __name__ == "__main__":
    unittest.main()
