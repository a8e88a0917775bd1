"""Writing batches to rotating JSON Lines files for `concord follow` or `concord ingest`.

Events go to DIR/PREFIX.jsonl and delayed labels to DIR/PREFIX-labels.jsonl
(the "active" files; `concord follow --labels DIR/PREFIX-labels.jsonl
DIR/PREFIX.jsonl` tails them). When an active file reaches max_bytes, or
has been open for max_seconds, it is renamed to
PREFIX.NNNNNNNN.YYYYmmddTHHMMSSZ.jsonl (labels: PREFIX-labels.NNNNNNNN...),
NNNNNNNN a sequence number that goes on across runs, and a new active file
is started. follow notices the rename (a new inode at the path), reads the
old file to its end and goes on with the new one. The names sort in the
order they were written, the active file last (digits sort before "j"), so
`concord ingest DIR/PREFIX.*jsonl` reads everything in order.

Only complete lines reach a file: a batch is written with one os.write on an
O_APPEND descriptor, and if that write fails half-way the file is cut back to
its size before the batch, so a reader never sees half a line from us.
"""

import os
import re
import threading
import time

SUFFIX = ".jsonl"


class FileSink:
    """Appends batches to rotating files in one directory (one writer per prefix)."""

    def __init__(self, directory, prefix="predictions", max_bytes=64 << 20, max_seconds=3600.0,
                 clock=time.time):
        if not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._-]*", prefix):
            raise ValueError("file prefix %r: use letters, digits, '.', '_' and '-' "
                             "(starting with a letter or digit)" % prefix)
        if max_bytes < 1:
            raise ValueError("max_bytes must be at least 1")
        self.directory = os.fspath(directory)
        os.makedirs(self.directory, exist_ok=True)
        self.prefix = prefix
        self.max_bytes = max_bytes
        self.max_seconds = max_seconds
        self.clock = clock
        self._lock = threading.Lock()
        self._files = {}            # kind -> [fd, size, opened_at]
        self._seq = self._last_seq()

    def active_path(self, kind):
        stem = self.prefix if kind == "event" else self.prefix + "-labels"
        return os.path.join(self.directory, stem + SUFFIX)

    def rotated_paths(self, kind):
        """The rotated files of a kind, oldest first."""
        pattern = self._rotated_re(kind)
        names = sorted(n for n in os.listdir(self.directory) if pattern.fullmatch(n))
        return [os.path.join(self.directory, n) for n in names]

    def _rotated_re(self, kind):
        stem = self.prefix if kind == "event" else self.prefix + "-labels"
        return re.compile(re.escape(stem) + r"\.(\d{8,})\.\d{8}T\d{6}Z" + re.escape(SUFFIX))

    def _last_seq(self):
        """Sequence numbers go on from the files already there."""
        last = 0
        for kind in ("event", "label"):
            pattern = self._rotated_re(kind)
            for name in os.listdir(self.directory):
                m = pattern.fullmatch(name)
                if m:
                    last = max(last, int(m.group(1)))
        return last

    def _open(self, kind):
        path = self.active_path(kind)
        fd = os.open(path, os.O_WRONLY | os.O_APPEND | os.O_CREAT | os.O_CLOEXEC, 0o640)
        size = os.fstat(fd).st_size
        # a file left by an earlier run keeps its age from its first write
        opened = self.clock()
        if size > 0:
            opened = min(opened, os.fstat(fd).st_mtime)
        self._files[kind] = [fd, size, opened]
        return self._files[kind]

    def _rotate(self, kind):
        fd = self._files.pop(kind)[0]
        os.close(fd)
        self._seq += 1
        stamp = time.strftime("%Y%m%dT%H%M%SZ", time.gmtime(self.clock()))
        stem = self.prefix if kind == "event" else self.prefix + "-labels"
        target = os.path.join(self.directory, "%s.%08d.%s%s" % (stem, self._seq, stamp, SUFFIX))
        os.rename(self.active_path(kind), target)
        return target

    def send(self, model, kind, lines):
        """Appends the lines; rotates first when the active file is full or old."""
        data = b"".join(lines)
        with self._lock:
            f = self._files.get(kind) or self._open(kind)
            if f[1] > 0 and (f[1] + len(data) > self.max_bytes
                             or self.clock() - f[2] >= self.max_seconds):
                self._rotate(kind)
                f = self._open(kind)
            fd, size = f[0], f[1]
            try:
                written = os.write(fd, data)
                if written != len(data):
                    raise OSError("short write (%d of %d bytes)" % (written, len(data)))
            except OSError:
                try:
                    os.ftruncate(fd, size)
                except OSError:
                    pass
                raise
            f[1] = size + len(data)
        return None

    def rotate_now(self):
        """Rotates every non-empty active file (for a clean hand-over, or tests)."""
        with self._lock:
            for kind in list(self._files):
                if self._files[kind][1] > 0:
                    self._rotate(kind)

    def close(self):
        with self._lock:
            for f in self._files.values():
                os.close(f[0])
            self._files.clear()
