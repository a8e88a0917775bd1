"""The report reader: a report written by the real `concord report --format
json` loaded from a file and from a URL, and its DataFrames checked value by
value against the JSON they came from."""

import builtins
import json
import math
import os
import subprocess
import tempfile
import unittest

import concord_client
from concord_client.http_sink import PermanentError
from support import HANG_GUARD, ScriptedServer, invented_events, run_concord

MEMBERS = ["hue", "shape", "size"]
CLASSES = ["premium", "extra", "juice", "cull"]


def same(a, b):
    """JSON null and NaN are the same undefined figure; numbers compare exactly."""
    if b is None:
        return a is None or (isinstance(a, float) and math.isnan(a))
    return a == b


class ReportFromConcord(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.dir = tempfile.mkdtemp(prefix="concord-py-")
        path = os.path.join(cls.dir, "ev.jsonl")
        with open(path, "w") as f:
            for eid, probs, ts, label in invented_events(600, members=3, classes=4):
                obj = {"id": eid, "ts": ts, "probs": probs}
                if label is not None:
                    obj["label"] = label
                f.write(json.dumps(obj) + "\n")
        cls.db = os.path.join(cls.dir, "r.db")
        run_concord("ingest", "--db", cls.db, "--model", "pack", "--classes", ",".join(CLASSES),
                    "--members", ",".join(MEMBERS), "--quiet", path)
        run_concord("baseline", "--db", cls.db, "--model", "pack", "--from", "2025-12-01",
                    "--to", "2025-12-02")
        cls.by_day_text = run_concord("report", "--db", cls.db, "--model", "pack", "--by", "day",
                                      "--format", "json").stdout
        cls.by_day = json.loads(cls.by_day_text)
        cls.path = os.path.join(cls.dir, "report.json")
        with open(cls.path, "wb") as f:
            f.write(cls.by_day_text)

    @classmethod
    def tearDownClass(cls):
        subprocess.run(["rm", "-rf", cls.dir])

    def test_load_from_file_is_the_json(self):
        report = concord_client.load_report(self.path)
        self.assertEqual(report, self.by_day)
        self.assertEqual(len(report["windows"]), 3)

    def test_load_refuses_what_is_not_a_report(self):
        bad = os.path.join(self.dir, "bad.json")
        with open(bad, "w") as f:
            f.write('{"models": []}')
        with self.assertRaises(ValueError) as cm:
            concord_client.load_report(bad)
        self.assertIn("not a concord report", str(cm.exception))
        with open(bad, "w") as f:
            f.write("concord report, text form\n")
        with self.assertRaises(ValueError) as cm:
            concord_client.load_report(bad)
        self.assertIn("--format json", str(cm.exception))

    def test_load_from_url_with_token(self):
        srv = ScriptedServer()
        self.addCleanup(srv.stop)
        srv.answer_get(200, {"Content-Type": "application/json"}, self.by_day_text)
        url = concord_client.report_url(srv.url, "pack", frm="2025-12-01", to="2025-12-03", by="day")
        report = concord_client.load_report(url, token="r34d", timeout=HANG_GUARD)
        self.assertEqual(report, self.by_day)
        req = srv.requests[-1]
        self.assertEqual(req["path"], "/v1/models/pack/report?format=json&from=2025-12-01"
                                      "&to=2025-12-03&by=day")
        self.assertEqual(req["headers"]["Authorization"], "Bearer r34d")
        srv.answer_get(404, {}, b'{"error":{"status":404,"message":"unknown model \\"nope\\""}}')
        with self.assertRaises(PermanentError) as cm:
            concord_client.fetch_report(srv.url, "nope", timeout=HANG_GUARD)
        self.assertEqual(cm.exception.status, 404)
        self.assertIn('unknown model "nope"', str(cm.exception))
        with self.assertRaises(ValueError):
            concord_client.report_url(srv.url, "pack", by="month")

    def test_windows_frame_matches_the_json(self):
        try:
            import pandas  # noqa: F401
        except ImportError:
            self.skipTest("pandas is not installed (Debian: python3-pandas)")
        report = self.by_day
        frame = concord_client.windows_frame(report)
        self.assertEqual([d.strftime("%Y-%m-%d") for d in frame.index],
                         [w["from"] for w in report["windows"]])
        for i, w in enumerate(report["windows"]):
            row = frame.iloc[i]
            checks = {
                "events": w["events"],
                "uncertainty.mutual_information": w["uncertainty"]["mutual_information"],
                "diversity.disagreement.mean": w["diversity"]["disagreement"]["mean"],
                "drift.class_mix.p_value": w["drift"]["class_mix"]["p_value"],
                "accuracy.ensemble": w["accuracy"]["ensemble"],
            }
            for m, name in enumerate(MEMBERS):
                checks["accuracy.members[%s]" % name] = w["accuracy"]["members"][m]
                checks["by_member.departure[%s]" % name] = w["by_member"]["departure"][m]
                checks["calibration.members[%s].ece" % name] = w["calibration"]["members"][m]["ece"]
            for c, name in enumerate(CLASSES):
                checks["by_class.recall[%s]" % name] = w["by_class"]["recall"][c]
                checks["class_counts[%s]" % name] = w["class_counts"][c]
                checks["label_shift.em[%s]" % name] = (w["label_shift"]["em"] or [None] * 4)[c]
            for path, z in w["zscores"].items():
                if not isinstance(z, list):
                    checks["zscores." + path] = z
            for col, expected in checks.items():
                with self.subTest(window=i, column=col):
                    self.assertTrue(same(row[col], expected), "%r != %r" % (row[col], expected))
            # every scalar leaf of the window is a column, and nothing else is
            flat = concord_client.window_figures(report, i)
            self.assertEqual(set(frame.columns), set(flat) - {"from"})
            for col, value in flat.items():
                if col != "from":
                    self.assertTrue(same(row[col], value), col)

    def test_pair_and_confusion_frames(self):
        try:
            import pandas  # noqa: F401
        except ImportError:
            self.skipTest("pandas is not installed (Debian: python3-pandas)")
        w = self.by_day["windows"][1]
        pairs = concord_client.pair_frames(self.by_day, 1)
        self.assertIn("kappa", pairs)
        self.assertIn("double_fault", pairs)
        for name, frame in pairs.items():
            self.assertEqual(list(frame.index), MEMBERS)
            self.assertEqual(list(frame.columns), MEMBERS)
            for a in range(3):
                for b in range(3):
                    self.assertTrue(same(frame.iloc[a, b], w["diversity"][name]["pairs"][a][b]),
                                    (name, a, b))
        conf = concord_client.confusion_frame(self.by_day, 1)
        self.assertEqual(conf.values.tolist(), w["accuracy"]["confusion"])
        self.assertEqual(list(conf.index), CLASSES)
        self.assertEqual(int(conf.values.sum()), w["labeled"])
        bins = concord_client.reliability_frame(self.by_day, 1)
        self.assertEqual(len(bins), 15)
        self.assertEqual(int(bins["count"].sum()), w["labeled"])


class WithoutPandas(unittest.TestCase):
    def test_clear_import_error(self):
        real_import = builtins.__import__

        def no_pandas(name, *args, **kw):
            if name == "pandas" or name.startswith("pandas."):
                raise ImportError("No module named 'pandas'")
            return real_import(name, *args, **kw)
        builtins.__import__ = no_pandas
        try:
            with self.assertRaises(ImportError) as cm:
                concord_client.windows_frame({"members": [], "classes": [], "windows": []})
        finally:
            builtins.__import__ = real_import
        msg = str(cm.exception)
        self.assertIn("windows_frame needs pandas", msg)
        self.assertIn("python3-pandas", msg)
        self.assertIn("load_report()", msg)


if __name__ == "__main__":
    unittest.main()
