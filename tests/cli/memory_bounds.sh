#!/usr/bin/env bash
# memory_bounds.sh — peak memory of ingest, report and review stays under a
# fixed bound however many days or events they cover (issue 13, item 3).
# Peak RSS is GNU time's %M (KiB). The bounds are generous (several times
# what this build needs, see README "Memory") so they hold on any machine,
# and far below what the unbounded code took on the same inputs:
#   5 x 10 events on 3,000 distinct days: ingest 709 MB before, 45 MB after
#   64 x 256, 200 events over 100 days:   ingest 1.6 GB before, 74 MB after;
#                                         by-day report 1.62 GB (text) and
#                                         1.76 GB (JSON) before, 45-47 MB after
#   review --where all --limit 100000 of the demo at 600 events a day
#   (16,800 events):                      229 MB (text), 611 MB (JSON),
#                                         213 MB (CSV) before, 27 MB after
# Usage: memory_bounds.sh CONCORD
set -euo pipefail
CONCORD=$1
GNU_TIME=/usr/bin/time
if [ -n "${CONCORD_SANITIZED:-}" ]; then
  echo "SKIP: a sanitizer build: peak RSS would measure AddressSanitizer's quarantine and shadow memory, not concord's bounds (the ordinary build runs this test)" >&2
  exit 77
fi
if ! "$GNU_TIME" -f %M true > /dev/null 2>&1; then
  echo "SKIP: GNU time (Debian package 'time') is needed to measure peak memory" >&2
  exit 77
fi
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

# peak KiB of a command (its own output to $T/out, its stderr to $T/err)
peak() {
  "$GNU_TIME" -o "$T/rss" -f "%e s\n%M" "$@" > "$T/out" 2> "$T/err" || {
    echo "command failed: $*" >&2; cat "$T/err" >&2; return 1; }
  head -n 1 "$T/rss" >&2; tail -n 1 "$T/rss"
}
# check NAME KIB BOUND_MIB
check() {
  local mib=$(( $2 / 1024 ))
  echo "$1: peak $mib MiB (bound $3 MiB)"
  [ "$mib" -le "$3" ] || fail "$1 took $mib MiB, more than $3 MiB"
}

# Events as JSON Lines: n events of m members x k classes, one every `step`
# seconds from 2001-01-01 (invented numbers; the shape is what matters).
gen() {
  python3 - "$@" <<'PY'
import random, sys
n, m, k, step, out = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4]), sys.argv[5]
rnd = random.Random(13)
t0 = 978307200  # 2001-01-01T00:00:00Z
with open(out, "w") as f:
    for i in range(n):
        rows = []
        for _ in range(m):
            w = [rnd.random() + 0.01 for _ in range(k)]
            s = sum(w)
            p = [round(x / s, 6) for x in w]
            p[0] = round(1 - sum(p[1:]), 6)  # the rounding remainder, so rows sum to 1
            rows.append("[" + ",".join("%.6f" % x for x in p) + "]")
        label = ',"label":%d' % rnd.randrange(k) if i % 2 else ""
        f.write('{"id":"e%d","ts":%d,"probs":[%s]%s}\n' % (i, t0 + i * step + 3600, ",".join(rows), label))
PY
}

# 1. ingest of 3,000 events on 3,000 distinct days (5 x 10)
gen 3000 5 10 86400 "$T/days.jsonl"
kib=$(peak "$CONCORD" ingest --db "$T/days.db" "$T/days.jsonl")
check "ingest, 3,000 days of 5x10" "$kib" 256
"$CONCORD" verify --db "$T/days.db" --model default > "$T/verify" ||
  fail "verify after the 3,000-day ingest: $(grep -v ' ok$' "$T/verify" | head -3)"
grep -q '^3000 days checked, 0 mismatched' "$T/verify" || fail "verify: $(tail -n 1 "$T/verify")"

# 2. the largest shape, 64 x 256: 200 events over 100 days
gen 200 64 256 43200 "$T/big.jsonl"
kib=$(peak "$CONCORD" ingest --db "$T/big.db" "$T/big.jsonl")
check "ingest, 64x256 over 100 days" "$kib" 256
"$CONCORD" verify --db "$T/big.db" --model default > "$T/verify" ||
  fail "verify after the 64x256 ingest: $(grep -v ' ok$' "$T/verify" | head -3)"
"$CONCORD" baseline --db "$T/big.db" --model default --from 2001-01-01 --to 2001-01-30 > /dev/null
kib_text=$(peak "$CONCORD" report --db "$T/big.db" --model default)
grep -q '^2001-04-10 ' "$T/out" || fail "the by-day text report lacks its last day"
check "report by day (text), 64x256, 100 days" "$kib_text" 256
kib=$(peak "$CONCORD" report --db "$T/big.db" --model default --format json -o "$T/big.json")
check "report by day (JSON), 64x256, 100 days" "$kib" 256
python3 -c 'import json,sys; w=json.load(open(sys.argv[1]))["windows"]; assert len(w) == 100, len(w)' \
  "$T/big.json" || fail "the by-day JSON report is not 100 parseable windows"
# and not growing with the days: 100 days against 10
kib10=$(peak "$CONCORD" report --db "$T/big.db" --model default --from 2001-03-01 --to 2001-03-10)
echo "report by day (text), 64x256, 10 days: peak $((kib10 / 1024)) MiB"
[ "$kib_text" -le $((kib10 + 48 * 1024)) ] ||
  fail "100 days took $((kib_text / 1024)) MiB against $((kib10 / 1024)) MiB for 10: grows with the days"

# 3. the largest review output
"$CONCORD" demo --dir "$T/demo" --per-day 600 > /dev/null 2>&1
for fmt in text json csv; do
  kib=$(peak "$CONCORD" review --db "$T/demo/demo.db" --model apple-grader --from 2026-01-01 \
    --to 2027-12-31 --where all --limit 100000 --format "$fmt" -o "$T/review.$fmt")
  check "review --where all --limit 100000 ($fmt), demo of 16,800 events" "$kib" 128
done
rows=$(($(wc -l < "$T/review.csv") - 1))
[ "$rows" -gt 40000 ] || fail "review CSV has only $rows rows"

# 4. the cap on the summary size: past 64 members or 256 classes no model is made
python3 -c '
import json
print(json.dumps({"id": "k", "ts": 978307200, "probs": [[1 / 257] * 257] * 2}))
print(json.dumps({"id": "m", "ts": 978307200, "probs": [[0.5, 0.5]] * 65}))' > "$T/over.jsonl"
"$CONCORD" ingest --db "$T/over.db" "$T/over.jsonl" > /dev/null 2> "$T/err" || true
grep -q "257 classes (allowed 2..256)" "$T/err" || fail "257 classes: $(cat "$T/err")"
grep -q "more than 64 member rows" "$T/err" || fail "65 members: $(cat "$T/err")"
[ "$(sqlite3 "$T/over.db" 'SELECT count(*) FROM models')" = 0 ] || fail "a model past the cap was created"

[ "$fails" -eq 0 ] && echo "memory_bounds: ok"
exit "$fails"
