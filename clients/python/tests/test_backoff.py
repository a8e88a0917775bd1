"""Backoff waits and Retry-After parsing."""

import random
import unittest

from concord_client import backoff


class Delays(unittest.TestCase):
    def test_full_jitter_stays_within_the_doubling_ceiling(self):
        # Brooker 2015, "full jitter": wait ~ U(0, min(cap, base * 2^n))
        rng = random.Random(7)
        for attempt in range(12):
            ceiling = min(30.0, 0.5 * 2 ** attempt)
            waits = [backoff.delay(attempt, 0.5, 30.0, rng=rng) for _ in range(400)]
            self.assertTrue(all(0.0 <= w <= ceiling for w in waits), attempt)
            # spread over the whole interval, not a constant (common practice check:
            # 400 uniform draws leave the top and bottom fifths non-empty)
            self.assertTrue(any(w < 0.2 * ceiling for w in waits))
            self.assertTrue(any(w > 0.8 * ceiling for w in waits))

    def test_retry_after_is_a_lower_bound(self):
        rng = random.Random(1)
        for attempt in range(5):
            self.assertGreaterEqual(backoff.delay(attempt, 0.01, 0.04, 2.0, rng), 2.0)
        # a longer jittered wait is kept
        self.assertEqual(backoff.delay(0, 10.0, 10.0, 0.0, _Fixed(0.9)), 9.0)

    def test_huge_attempt_numbers_do_not_overflow(self):
        self.assertLessEqual(backoff.delay(10 ** 6, 0.5, 30.0), 30.0)


class _Fixed:
    def __init__(self, share):
        self.share = share

    def uniform(self, lo, hi):
        return lo + self.share * (hi - lo)


class RetryAfter(unittest.TestCase):
    def test_forms_of_rfc9110(self):
        # RFC 9110 §10.2.3 examples: "Retry-After: Fri, 31 Dec 1999 23:59:59 GMT" and "120"
        self.assertEqual(backoff.parse_retry_after("120"), 120.0)
        now = 946684799.0 - 30           # 30 s before 1999-12-31T23:59:59Z
        self.assertAlmostEqual(backoff.parse_retry_after("Fri, 31 Dec 1999 23:59:59 GMT", now),
                               30.0, places=6)
        self.assertEqual(backoff.parse_retry_after("Fri, 31 Dec 1999 23:59:59 GMT", now + 100), 0.0)
        self.assertEqual(backoff.parse_retry_after("99999"), backoff.RETRY_AFTER_MAX)
        for bad in (None, "", "soon", "-5", "1.5"):
            self.assertIsNone(backoff.parse_retry_after(bad), bad)


if __name__ == "__main__":
    unittest.main()
