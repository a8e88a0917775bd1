"""Checking and encoding one event or one delayed label as a JSON line.

The rules are those of concord's input format (README "Input format"), checked
here so that a malformed prediction raises in the caller's code instead of
being rejected later by the server or by `concord ingest`.
"""

import datetime
import json
import math
import numbers

MAX_MEMBERS = 64
MIN_CLASSES, MAX_CLASSES = 2, 256
MAX_ID_BYTES = 128
MAX_SEGMENT_BYTES = 256
ROW_SUM_TOLERANCE = 1e-3
# concord refuses event times outside 2000-01-01 .. 2099-12-31 (UTC) by default
TS_MIN = 946684800.0          # 2000-01-01T00:00:00Z
TS_END = 4102444800.0         # 2100-01-01T00:00:00Z


def _name(value, field, max_bytes, required=True):
    """Checks a name: a str of 1..max_bytes UTF-8 bytes without NUL."""
    if not isinstance(value, str):
        raise TypeError("%s must be a str, not %s" % (field, type(value).__name__))
    try:
        size = len(value.encode("utf-8"))
    except UnicodeEncodeError as e:
        raise ValueError("%s is not valid UTF-8 (lone surrogate at %d)" % (field, e.start))
    if required and size == 0:
        raise ValueError("%s is empty" % field)
    if size > max_bytes:
        raise ValueError("%s is %d bytes long; at most %d" % (field, size, max_bytes))
    if "\0" in value:
        raise ValueError("%s holds a NUL character" % field)
    return value


def check_id(event_id):
    return _name(event_id, "id", MAX_ID_BYTES)


def check_segment(segment):
    return _name(segment, "segment", MAX_SEGMENT_BYTES, required=False)


def _number(v, what, m, c):
    if isinstance(v, bool) or not isinstance(v, numbers.Real):
        raise ValueError("%s[%d][%d] is not a number: %r" % (what, m, c, v))
    return float(v)


def _rows(values, what):
    """Returns values as a list of lists of Python floats (numpy arrays too)."""
    if hasattr(values, "ndim") and hasattr(values, "tolist"):
        if values.ndim != 2:
            raise ValueError("%s must be 2-dimensional (members x classes); got %d dimensions"
                             % (what, values.ndim))
        values = values.tolist()
    if isinstance(values, (str, bytes)) or not hasattr(values, "__len__"):
        raise ValueError("%s must be a list of members' rows (members x classes)" % what)
    rows = []
    for m, row in enumerate(values):
        if hasattr(row, "tolist"):
            row = row.tolist()
        if isinstance(row, (str, bytes)) or not hasattr(row, "__iter__"):
            raise ValueError("%s[%d] is not a row of class probabilities" % (what, m))
        row = list(row)
        if not all(type(v) is float for v in row):      # the common case costs one pass
            row = [_number(v, what, m, c) for c, v in enumerate(row)]
        rows.append(row)
    return rows


def _matrix(values, what, shape):
    """Rows of finite floats, 1..64 members, 2..256 classes, all rows alike,
    and the logger's shape when it has one."""
    rows = _rows(values, what)
    m = len(rows)
    if not 1 <= m <= MAX_MEMBERS:
        raise ValueError("%s has %d members' rows; 1..%d allowed" % (what, m, MAX_MEMBERS))
    k = len(rows[0])
    if not MIN_CLASSES <= k <= MAX_CLASSES:
        raise ValueError("%s has %d classes; %d..%d allowed" % (what, k, MIN_CLASSES, MAX_CLASSES))
    for i, row in enumerate(rows):
        if len(row) != k:
            raise ValueError("%s[%d] has %d classes but %s[0] has %d" % (what, i, len(row), what, k))
        if not all(map(math.isfinite, row)):
            c = next(c for c, v in enumerate(row) if not math.isfinite(v))
            raise ValueError("%s[%d][%d] is %r; only finite numbers are accepted"
                             % (what, i, c, row[c]))
    if shape is not None and (m, k) != tuple(shape):
        raise ValueError("%s is %d x %d but this logger's events are %d x %d (members x classes)"
                         % (what, m, k, shape[0], shape[1]))
    return rows


def check_probs(probs, shape=None):
    """Checks an M x K matrix of class probabilities and returns it as lists.

    Each value must be finite and in [0, 1], each row must sum to 1 within
    1e-3, all rows must have K values, 1 <= M <= 64, 2 <= K <= 256. With
    shape=(M, K) the matrix must have that shape (a model's first event fixes
    it). Raises ValueError naming the member and class at fault.
    """
    rows = _matrix(probs, "probs", shape)
    for i, row in enumerate(rows):
        if min(row) < 0.0 or max(row) > 1.0:
            c = next(c for c, v in enumerate(row) if not 0.0 <= v <= 1.0)
            raise ValueError("probs[%d][%d] = %r is outside [0, 1]" % (i, c, row[c]))
        total = math.fsum(row)
        if abs(total - 1.0) > ROW_SUM_TOLERANCE:
            raise ValueError("probs[%d] sums to %.6g; each member's row must sum to 1 within %g"
                             % (i, total, ROW_SUM_TOLERANCE))
    return rows


def check_logits(logits, shape=None):
    """Checks an M x K matrix of raw scores (any finite numbers; concord applies
    a softmax per member) and returns it as lists."""
    return _matrix(logits, "logits", shape)


def check_ts(ts, now):
    """Returns the event time as Unix seconds (int or float) or an RFC 3339 str.

    None means `now` (a float); a datetime must carry a time zone; a number is
    Unix seconds; a str is passed on as it is (concord parses RFC 3339).
    """
    if ts is None:
        ts = now
    elif isinstance(ts, datetime.datetime):
        if ts.tzinfo is None or ts.utcoffset() is None:
            raise ValueError("ts is a naive datetime; give it a time zone "
                             "(datetime.timezone.utc) so the UTC day is certain")
        ts = ts.timestamp()
    elif isinstance(ts, str):
        _name(ts, "ts", 64)
        return ts
    elif isinstance(ts, bool) or not isinstance(ts, numbers.Real):
        raise TypeError("ts must be Unix seconds, an aware datetime or an RFC 3339 str, not %s"
                        % type(ts).__name__)
    ts = float(ts)
    if math.isnan(ts) or not TS_MIN <= ts < TS_END:
        raise ValueError("ts = %r is outside 2000-01-01..2099-12-31 UTC (Unix seconds expected, "
                         "not milliseconds)" % ts)
    return int(ts) if ts.is_integer() else ts


def check_label(label, classes=None):
    """A label is a class index 0..K-1 (K = classes) or a class name."""
    if isinstance(label, bool):
        raise TypeError("label must be a class index or a class name, not a bool")
    if isinstance(label, numbers.Integral):
        label = int(label)
        if label < 0 or (classes is not None and label >= classes):
            raise ValueError("label %d is outside 0..%s" % (label,
                             classes - 1 if classes is not None else "K-1"))
        return label
    if isinstance(label, str):
        return _name(label, "label", MAX_ID_BYTES)
    raise TypeError("label must be a class index (int) or a class name (str), not %s"
                    % type(label).__name__)


def _dumps(obj):
    return json.dumps(obj, ensure_ascii=False, separators=(",", ":"), allow_nan=False)


def encode_event(event_id, rows, ts, label=None, segment=None, model=None, key="probs"):
    """One event as a JSON line (bytes, newline included); inputs already checked.
    key is "probs" or "logits"."""
    obj = {"id": event_id, "ts": ts}
    if model is not None:
        obj["model"] = model
    if segment is not None:
        obj["segment"] = segment
    obj[key] = rows
    if label is not None:
        obj["label"] = label
    return (_dumps(obj) + "\n").encode("utf-8")


def encode_label(event_id, label, model=None):
    """One delayed label as a JSON line (bytes, newline included)."""
    obj = {"id": event_id, "label": label}
    if model is not None:
        obj["model"] = model
    return (_dumps(obj) + "\n").encode("utf-8")
