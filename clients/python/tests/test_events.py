"""Early checks of log()'s arguments: malformed events raise in the caller."""

import datetime
import json
import math
import unittest

from concord_client import events


class ProbsChecks(unittest.TestCase):
    def test_good_matrix_passes_as_floats(self):
        rows = events.check_probs([[0.25, 0.75], [1, 0]])
        self.assertEqual(rows, [[0.25, 0.75], [1.0, 0.0]])
        self.assertIsInstance(rows[1][0], float)

    def test_refusals_name_the_fault(self):
        cases = [
            ([[0.5, math.nan]], "probs[0][1] is nan"),
            ([[0.5, 0.5], [math.inf, 0.0]], "probs[1][0] is inf"),
            ([[1.2, -0.2]], "outside [0, 1]"),
            ([[0.5, 0.4]], "sums to 0.9"),
            ([[0.5, 0.5], [0.2, 0.3, 0.5]], "probs[1] has 3 classes but probs[0] has 2"),
            ([[1.0]], "1 classes; 2..256"),
            ([], "0 members"),
            ([[0.5, "0.5"]], "not a number"),
            ([[True, False]], "not a number"),
            ("0.5,0.5", "list of members"),
            ([0.5, 0.5], "not a row"),
            ([[1.0 / 65] * 65] * 65, "65 members"),
        ]
        for probs, words in cases:
            with self.subTest(probs=str(probs)[:40]):
                with self.assertRaises(ValueError) as cm:
                    events.check_probs(probs)
                self.assertIn(words, str(cm.exception))

    def test_row_sum_tolerance_is_concords(self):
        # README "Input format": each row sums to 1 within 1e-3
        events.check_probs([[0.5, 0.5009]])
        with self.assertRaises(ValueError):
            events.check_probs([[0.5, 0.5011]])

    def test_logits_any_finite_numbers(self):
        self.assertEqual(events.check_logits([[3, -1.5], [0, 40]]), [[3.0, -1.5], [0.0, 40.0]])
        with self.assertRaises(ValueError) as cm:
            events.check_logits([[1.0, math.inf]])
        self.assertIn("logits[0][1] is inf", str(cm.exception))

    def test_shape_fixed_by_the_logger(self):
        with self.assertRaises(ValueError) as cm:
            events.check_probs([[0.5, 0.5]], shape=(2, 2))
        self.assertIn("1 x 2 but this logger's events are 2 x 2", str(cm.exception))


class OtherFields(unittest.TestCase):
    def test_ids(self):
        self.assertEqual(events.check_id("é" * 64), "é" * 64)   # 128 bytes
        for bad, err in (("", ValueError), ("x" * 129, ValueError), ("a\0b", ValueError),
                         (17, TypeError), ("\ud800", ValueError)):
            with self.subTest(bad=bad):
                self.assertRaises(err, events.check_id, bad)

    def test_timestamps(self):
        now = 1764547200.5
        self.assertEqual(events.check_ts(None, now), now)
        self.assertEqual(events.check_ts(1764547200.0, now), 1764547200)
        aware = datetime.datetime(2025, 12, 1, 1, 0, tzinfo=datetime.timezone(datetime.timedelta(hours=1)))
        self.assertEqual(events.check_ts(aware, now), 1764547200)
        self.assertEqual(events.check_ts("2025-12-01T00:00:00Z", now), "2025-12-01T00:00:00Z")
        with self.assertRaises(ValueError):
            events.check_ts(datetime.datetime(2025, 12, 1), now)      # naive
        with self.assertRaises(ValueError) as cm:
            events.check_ts(1764547200000, now)                       # milliseconds
        self.assertIn("not milliseconds", str(cm.exception))
        for bad in (math.nan, True, [1]):
            with self.subTest(bad=bad):
                self.assertRaises((ValueError, TypeError), events.check_ts, bad, now)

    def test_labels(self):
        self.assertEqual(events.check_label(3, 4), 3)
        self.assertEqual(events.check_label("extra", 4), "extra")
        self.assertRaises(ValueError, events.check_label, 4, 4)
        self.assertRaises(ValueError, events.check_label, -1, 4)
        self.assertRaises(TypeError, events.check_label, True, 4)
        self.assertRaises(TypeError, events.check_label, 1.0, 4)

    def test_encoded_line_is_one_json_object(self):
        line = events.encode_event("a\n\"b", [[0.25, 0.75]], 1764547200, 1, "line-3", "m")
        self.assertTrue(line.endswith(b"\n"))
        self.assertEqual(line.count(b"\n"), 1)
        self.assertEqual(json.loads(line), {"id": "a\n\"b", "ts": 1764547200, "model": "m",
                                            "segment": "line-3", "probs": [[0.25, 0.75]],
                                            "label": 1})
        self.assertEqual(json.loads(events.encode_label("x", "extra")), {"id": "x", "label": "extra"})


class NumpyInput(unittest.TestCase):
    def setUp(self):
        try:
            import numpy
        except ImportError:
            self.skipTest("numpy is not installed (Debian: python3-numpy)")
        self.np = numpy

    def test_float32_matrix_is_taken_exactly(self):
        np = self.np
        a = np.array([[0.1, 0.7, 0.2], [0.3, 0.3, 0.4]], dtype=np.float32)
        rows = events.check_probs(a)
        # each value is the float32's exact value as a Python float
        self.assertEqual(rows, [[float(v) for v in r] for r in a])
        self.assertEqual(np.array(rows, dtype=np.float32).tobytes(), a.tobytes())

    def test_numpy_nan_and_shapes_refused(self):
        np = self.np
        with self.assertRaises(ValueError):
            events.check_probs(np.array([[0.5, np.nan]]))
        with self.assertRaises(ValueError) as cm:
            events.check_probs(np.ones((2, 2, 2)) / 2)
        self.assertIn("2-dimensional", str(cm.exception))
        self.assertEqual(events.check_probs(np.array([[1, 0]], dtype=np.int64)), [[1.0, 0.0]])

    def test_list_of_numpy_rows(self):
        np = self.np
        rows = events.check_probs([np.array([0.5, 0.5]), np.array([0.25, 0.75])])
        self.assertEqual(rows, [[0.5, 0.5], [0.25, 0.75]])


if __name__ == "__main__":
    unittest.main()
