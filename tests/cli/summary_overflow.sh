#!/usr/bin/env bash
# summary_overflow.sh — a summary counter that would pass 2^63 stops the
# command instead of wrapping (metrics/summary.h, layout 2): a day whose
# stored event count is INT64_MAX takes no further event (ingest exits 3,
# names model and day, and writes nothing of the batch: rows and summaries
# as they were), and a report whose window adds two days of 2^62 events
# each exits 3 the same way, while each day alone still reads. The stored
# vectors are edited with the codec of collector/summary_codec.c written
# out below in Python.
# Usage: summary_overflow.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
q() { sqlite3 "$T/o.db" "$1"; }

# invented events of the demo (a fruit-packing grader): two days
"$C" demo --dir "$T/d" --per-day 10 > /dev/null
grep '"d0[12]-' "$T/d/events.jsonl" | grep -v '"d02-00005"' > "$T/two.jsonl"
grep '"d02-00005"' "$T/d/events.jsonl" > "$T/late.jsonl"
[ -s "$T/late.jsonl" ] || fail "no late event in the demo"
"$C" ingest --db "$T/o.db" --model g --classes premium,extra,class-1,class-2,juice,cull --quiet "$T/two.jsonl"
"$C" verify --db "$T/o.db" --model g > /dev/null || fail "verify before the edit"

# sets counter 0 (the event count) of the stored day summaries to VALUE
set_events() { # SQL-WHERE VALUE
  /usr/bin/python3 - "$T/o.db" "$1" "$2" <<'PY'
import sqlite3, sys
def uvar(b, i):
    x = s = 0
    while True:
        c = b[i]; i += 1; x |= (c & 0x7f) << s; s += 7
        if c < 0x80: return x, i
def put(x):
    out = bytearray()
    while x >= 0x80: out.append((x & 0x7f) | 0x80); x >>= 7
    out.append(x); return bytes(out)
db = sqlite3.connect(sys.argv[1])
value = int(sys.argv[3])
for table in ("summaries", "slice_summaries"):
    rows = db.execute("SELECT day, %s, counters FROM %s WHERE %s" % ("slice_id" if table == "slice_summaries" else "0", table, sys.argv[2])).fetchall()
    for day, sl, blob in rows:
        run, i = uvar(blob, 0)
        assert run == 0, "the event count is not stored first"
        _, i = uvar(blob, i)
        new = put(0) + put(value << 1) + blob[i:]      # zigzag of a positive value
        if table == "summaries":
            db.execute("UPDATE summaries SET counters = ?, events = ? WHERE day = ?", (new, value, day))
        else:
            db.execute("UPDATE slice_summaries SET counters = ?, events = ? WHERE day = ? AND slice_id = ?", (new, value, day, sl))
db.commit()
PY
}

# 1. a day at INT64_MAX events takes no further event
d2=$(q "SELECT day FROM summaries ORDER BY day DESC LIMIT 1")
set_events "day = $d2" 9223372036854775807
rows=$(q "SELECT count(*) FROM events")
before=$(q "SELECT hex(counters) FROM summaries ORDER BY day" | sha256sum)
rc=0; "$C" ingest --db "$T/o.db" --model g --quiet "$T/late.jsonl" 2> "$T/err" || rc=$?
[ $rc = 3 ] || fail "ingest past INT64_MAX: exit $rc, expected 3"
grep -q "summary counter overflow at model 'g', 2026-10-06.*nothing was written" "$T/err" \
  || fail "ingest past INT64_MAX said: $(cat "$T/err")"
[ "$(q "SELECT count(*) FROM events")" = "$rows" ] || fail "the event row of the refused batch was kept"
[ "$(q "SELECT hex(counters) FROM summaries ORDER BY day" | sha256sum)" = "$before" ] \
  || fail "a summary changed in the refused batch"
[ "$(q "SELECT events FROM summaries WHERE day = $d2")" = 9223372036854775807 ] || fail "the count moved"

# 2. two days of 2^62 events: each alone reads, their sum does not fit
set_events "1" 4611686018427387904
"$C" report --db "$T/o.db" --model g --by day --format json -o "$T/day.json" 2> "$T/err" \
  || fail "report by day of 2^62 events a day: $(cat "$T/err")"
rc=0; "$C" report --db "$T/o.db" --model g --by all --format json -o "$T/all.json" 2> "$T/err" || rc=$?
[ $rc = 3 ] || fail "report of 2^63 events: exit $rc, expected 3"
grep -q "summary counter overflow at model 'g', 2026-10-06" "$T/err" || fail "report of 2^63 events said: $(cat "$T/err")"
[ -e "$T/all.json" ] && fail "a report was written for a window that overflowed"

[ $fails = 0 ] && echo "summary_overflow: ok" || { echo "summary_overflow: $fails failures"; exit 1; }
