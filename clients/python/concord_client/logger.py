"""The logger a service calls for each prediction: checks it, buffers it, and
sends it in batches from a background thread.

log() never blocks on the network: it checks the event, encodes it and puts
it in a bounded buffer. When the buffer is full the OLDEST buffered item is
dropped and counted (stats()["dropped"]), so a slow or absent server costs
the service memory up to the bound (max_buffer lines, max_buffer_bytes bytes)
and nothing else. A background thread
sends batches of up to batch_size lines (when a batch is full, every
flush_interval seconds, on flush() and at close), retrying transient
failures with exponential backoff and jitter (backoff.py). Re-sending a
batch is safe: concord skips ids it has already stored.
"""

import atexit
import collections
import logging
import random
import threading
import time
import weakref

from . import backoff, events
from .file_sink import FileSink
from .http_sink import HttpSink, PermanentError, RetryableError

_log = logging.getLogger("concord_client")
MAX_KEPT_REJECTS = 20


class Logger:
    """Buffers events and delayed labels of one model and sends them in the background.

    sink: a server URL ("http://127.0.0.1:8750"; the token comes from `token`
    or $CONCORD_TOKEN; for https, cafile= trusts a PEM certificate authority
    besides the system's) or a sink object such as FileSink(directory).
    Thread-safe: any number of threads may call log(), label() and flush().
    """

    def __init__(self, sink, model, token=None, *, batch_size=1000, flush_interval=1.0,
                 max_buffer=100000, max_buffer_bytes=64 << 20, max_attempts=10, backoff_base=0.5, backoff_cap=30.0,
                 timeout=30.0, exit_timeout=5.0, strict=False, cafile=None, clock=time.time,
                 rng=None):
        events._name(model, "model", 256)
        if isinstance(sink, str):
            sink = HttpSink(sink, token=token, timeout=timeout, strict=strict, cafile=cafile)
        elif token is not None or cafile is not None:
            raise ValueError("token and cafile are for a server URL; this sink takes neither")
        if not 1 <= batch_size <= max_buffer:
            raise ValueError("batch_size must be in 1..max_buffer (%d)" % max_buffer)
        if max_attempts < 1:
            raise ValueError("max_attempts must be at least 1")
        self.sink = sink
        self.model = model
        self.batch_size = batch_size
        self.flush_interval = flush_interval
        self.max_buffer = max_buffer
        self.max_buffer_bytes = max_buffer_bytes
        self.max_attempts = max_attempts
        self.backoff_base = backoff_base
        self.backoff_cap = backoff_cap
        self.exit_timeout = exit_timeout
        self._clock = clock
        self._rng = rng if rng is not None else random.Random()
        # the file format names the model on each line; the URL does for the server
        self._line_model = None if isinstance(sink, HttpSink) else model

        self._cv = threading.Condition()
        self._queue = collections.deque()   # (seq, kind, line)
        self._seq = 0
        self._bytes = 0                     # bytes of the lines in _queue
        self._inflight_first = None         # seq of the first line being sent
        self._flush_upto = 0                # send at once everything up to this seq
        self._closing = False
        self._closed = False
        self._shape = None
        self._stop = threading.Event()
        self._stats = collections.Counter()
        self._waits = []                    # the last backoff waits, for inspection
        self.last_error = None
        self.last_rejects = collections.deque(maxlen=MAX_KEPT_REJECTS)

        self._thread = threading.Thread(target=self._run, name="concord-logger", daemon=True)
        self._thread.start()
        ref = weakref.ref(self)

        def at_exit():
            me = ref()
            if me is not None:
                me.close(me.exit_timeout)
        self._at_exit = at_exit
        atexit.register(at_exit)

    # -- the service's side -------------------------------------------------

    def log(self, id, probs=None, ts=None, label=None, segment=None, *, logits=None):
        """Queues one event: M x K class probabilities (lists or a numpy array),
        or instead M x K raw scores as logits= (concord applies the softmax).

        ts: Unix seconds, an aware datetime or an RFC 3339 str (default: now).
        label: class index or class name, when known now. Raises ValueError or
        TypeError at once for a malformed event; nothing is queued then.
        """
        events.check_id(id)
        if (probs is None) == (logits is None):
            raise TypeError("give either probs or logits (one of them)")
        if probs is not None:
            key, rows = "probs", events.check_probs(probs, self._shape)
        else:
            key, rows = "logits", events.check_logits(logits, self._shape)
        ts = events.check_ts(ts, self._clock())
        if label is not None:
            label = events.check_label(label, len(rows[0]))
        if segment is not None:
            events.check_segment(segment)
        line = events.encode_event(id, rows, ts, label, segment, self._line_model, key)
        shape = (len(rows), len(rows[0]))
        with self._cv:
            if self._shape is None:
                self._shape = shape
            elif self._shape != shape:
                raise ValueError("%s is %d x %d but this logger's events are %d x %d"
                                 % ((key,) + shape + self._shape))
            self._put("event", line)

    def label(self, id, label):
        """Queues a delayed label (class index or class name) for an event logged earlier."""
        events.check_id(id)
        classes = self._shape[1] if self._shape else None
        line = events.encode_label(id, events.check_label(label, classes), self._line_model)
        with self._cv:
            self._put("label", line)

    def _put(self, kind, line):
        if self._closed or self._closing:
            raise RuntimeError("this concord logger is closed")
        self._seq += 1
        self._queue.append((self._seq, kind, line))
        self._bytes += len(line)
        self._stats["logged" if kind == "event" else "labels_logged"] += 1
        while len(self._queue) > self.max_buffer or self._bytes > self.max_buffer_bytes:
            self._bytes -= len(self._queue.popleft()[2])
            self._stats["dropped"] += 1
        if len(self._queue) == 1 or len(self._queue) >= self.batch_size:
            self._cv.notify_all()

    def flush(self, timeout=None):
        """Sends everything queued so far; True when it is all settled (sent,
        refused or given up), False if `timeout` seconds passed first."""
        deadline = None if timeout is None else time.monotonic() + timeout
        with self._cv:
            target = self._seq
            self._flush_upto = max(self._flush_upto, target)
            self._cv.notify_all()
            while not self._settled(target):
                left = None if deadline is None else deadline - time.monotonic()
                if left is not None and left <= 0:
                    return False
                self._cv.wait(left)
            return True

    def _settled(self, target):
        if self._queue and self._queue[0][0] <= target:
            return False
        return self._inflight_first is None or self._inflight_first > target

    def close(self, timeout=None):
        """Flushes (up to `timeout` seconds), stops the thread and closes the sink.
        Returns what flush() returned; later log() calls raise RuntimeError."""
        with self._cv:
            if self._closed:
                return True
        deadline = None if timeout is None else time.monotonic() + timeout
        done = self.flush(timeout)
        with self._cv:
            self._closing = True
            self._cv.notify_all()
        self._stop.set()
        # a request in progress can outlast the deadline (up to the sink's own
        # timeout); close() leaves it to the daemon thread rather than wait
        self._thread.join(None if deadline is None else max(1.0, deadline - time.monotonic()))
        with self._cv:
            self._closed = True
            left = len(self._queue)     # a batch still in flight is counted by the thread
            self._stats["unsent_at_close"] += left
            self._queue.clear()
            self._bytes = 0
        if not self._thread.is_alive():
            self.sink.close()
        atexit.unregister(self._at_exit)
        if left:
            _log.warning("concord logger closed with %d lines unsent (%s)", left,
                         self.last_error or "flush timed out")
        return done

    def stats(self):
        """Counters: logged, labels_logged, accepted, duplicates, rejected,
        labels_set, labels_pending, written (file sink), dropped (buffer full),
        failed (given up), retries, batches, unsent_at_close; and buffered."""
        with self._cv:
            out = dict(self._stats)
            out["buffered"] = len(self._queue)
        for key in ("logged", "labels_logged", "accepted", "duplicates", "rejected", "labels_set",
                    "labels_pending", "written", "dropped", "failed", "retries", "batches",
                    "unsent_at_close"):
            out.setdefault(key, 0)
        return out

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close(self.exit_timeout)

    # -- the background thread ----------------------------------------------

    def _due(self, since):
        q = self._queue
        if not q:
            return False
        return (len(q) >= self.batch_size or q[0][0] <= self._flush_upto or self._closing
                or time.monotonic() - since >= self.flush_interval)

    def _run(self):
        since = time.monotonic()
        while True:
            with self._cv:
                while not self._due(since):
                    if self._closing and not self._queue:
                        return
                    self._cv.wait(None if not self._queue else
                                  max(0.001, self.flush_interval - (time.monotonic() - since)))
                if self._stop.is_set():
                    return
                kind = self._queue[0][1]
                batch = []
                while self._queue and len(batch) < self.batch_size and self._queue[0][1] == kind:
                    batch.append(self._queue.popleft())
                    self._bytes -= len(batch[-1][2])
                self._inflight_first = batch[0][0]
            try:
                self._deliver(kind, [b[2] for b in batch])
            except Exception as e:          # a sink's bug must not kill the thread
                self._fail(len(batch), "%s: %s" % (type(e).__name__, e))
            with self._cv:
                self._inflight_first = None
                since = time.monotonic()
                self._cv.notify_all()

    def _deliver(self, kind, lines):
        """Sends one batch, retrying transient failures; splits it on 413."""
        attempt = 0
        while True:
            try:
                answer = self.sink.send(self.model, kind, lines)
            except RetryableError as e:
                attempt += 1
                if attempt >= self.max_attempts or self._stop.is_set():
                    self._fail(len(lines), str(e))
                    return
                wait = backoff.delay(attempt - 1, self.backoff_base, self.backoff_cap,
                                     e.retry_after, self._rng)
                with self._cv:
                    self._stats["retries"] += 1
                    self._waits.append(wait)
                    del self._waits[:-50]
                    self.last_error = str(e)
                if self._stop.wait(wait):
                    self._fail(len(lines), str(e))
                    return
                continue
            except PermanentError as e:
                if e.status == 413 and len(lines) > 1:
                    half = len(lines) // 2
                    self._deliver(kind, lines[:half])
                    self._deliver(kind, lines[half:])
                    return
                self._fail(len(lines), str(e))
                return
            except OSError as e:
                self._fail(len(lines), "%s: %s" % (type(e).__name__, e))
                return
            self._count(kind, lines, answer)
            return

    def _count(self, kind, lines, answer):
        with self._cv:
            self._stats["batches"] += 1
            if answer is None:                       # a file sink: written
                self._stats["written"] += len(lines)
                return
            for key in ("accepted", "duplicates", "rejected", "labels_set", "labels_pending"):
                value = answer.get(key)
                if isinstance(value, int) and not isinstance(value, bool):
                    self._stats[key] += value
            for r in answer.get("rejects") or ():
                if not isinstance(r, dict):
                    continue
                n = r.get("line")
                text = lines[n - 1][:300] if isinstance(n, int) and 1 <= n <= len(lines) else b""
                self.last_rejects.append({"kind": kind, "reason": r.get("reason"),
                                          "line": text.decode("utf-8", "replace").rstrip("\n")})
        if answer.get("rejected"):
            _log.warning("concord refused %s of %d %ss in a batch (first reason: %s)",
                         answer.get("rejected"), len(lines), kind,
                         (answer.get("rejects") or [{}])[0].get("reason"))

    def _fail(self, n, why):
        with self._cv:
            self._stats["failed"] += n
            self.last_error = why
        _log.warning("concord logger gave up on %d lines: %s", n, why)


def file_logger(directory, model, prefix="predictions", max_bytes=64 << 20, max_seconds=3600.0,
                **options):
    """A Logger that writes rotating JSON Lines files for `concord follow` (see FileSink)."""
    return Logger(FileSink(directory, prefix, max_bytes, max_seconds), model, **options)
