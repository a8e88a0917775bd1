"""How long to wait before the next attempt to send a batch.

Exponential backoff with "full jitter": the wait before retry n (n = 0, 1, ..)
is drawn uniformly from [0, min(cap, base * 2**n)], so that many clients
refused at the same moment do not come back at the same moment (M. Brooker,
"Exponential Backoff And Jitter", AWS Architecture Blog, 2015). A server's
Retry-After (RFC 9110 §10.2.3: seconds or an HTTP date) is a lower bound.
"""

import email.utils
import random
import time

RETRY_AFTER_MAX = 600.0   # a longer Retry-After is read as this (common practice)


def parse_retry_after(value, now=None):
    """Seconds to wait from a Retry-After header value, or None if absent/unreadable."""
    if value is None:
        return None
    value = value.strip()
    if value.isdigit():
        return min(float(value), RETRY_AFTER_MAX)
    try:
        when = email.utils.parsedate_to_datetime(value)
    except (TypeError, ValueError, IndexError):
        return None
    if when is None:
        return None
    now = time.time() if now is None else now
    return min(max(0.0, when.timestamp() - now), RETRY_AFTER_MAX)


def delay(attempt, base, cap, retry_after=None, rng=random):
    """Seconds to wait before retry number `attempt` (0 for the first retry)."""
    ceiling = min(cap, base * (2.0 ** min(attempt, 62)))
    wait = rng.uniform(0.0, ceiling)
    if retry_after is not None:
        wait = max(wait, retry_after)
    return wait
