#!/usr/bin/env bash
# threads_ingest.sh — `ingest --threads N` and `label --threads N` store
# exactly what one thread stores: for N = 1, 2, 4 and 8 the databases are
# equal table by table (every row, in rowid order, the summaries' counter
# blobs byte for byte; only the wall-clock columns models.created_at,
# slices.created_at and rejects.at are blanked), the rejected lines are
# reported with the same files, line numbers and reasons, the tallies and
# exit codes are the same, and `verify` finds every day in order.
#
# Inputs: the demo's events and labels (11,200 events: 11 chunks of the
# pipeline's 1,024 lines), a generated file (the generator is below) with bad
# lines, blank lines, a line over the 1 MiB limit, duplicate ids, inline
# labels by index and by name, two models, segments and a second file and
# standard input in the same run; /dev/zero between two files (an endless
# line, given up after 64 MiB); with a batch of 7 lines so commits fall
# inside the pipeline's chunks; with --strict; with --ts-range; and labels
# that arrive before their events (waiting labels).
# Usage: threads_ingest.sh CONCORD
set -euo pipefail
export CONCORD_NOW=1790000000
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

# canonical DB OUT: every table's rows in rowid order (events with their
# rowid), clock columns blanked
canonical() {
  cp "$1" "$T/canon.db"
  sqlite3 "$T/canon.db" "UPDATE models SET created_at = 0; UPDATE slices SET created_at = 0;
                          UPDATE rejects SET at = 0;" 2> /dev/null
  {
    sqlite3 "$T/canon.db" .dump
    sqlite3 "$T/canon.db" "SELECT rowid, model_id, id, hex(probs) FROM events ORDER BY rowid"
  } > "$2"
  rm -f "$T/canon.db"
}

# run_case NAME CMD_ARGS...: runs the command (ingest or label, with its
# options and files, and --db DB appended) for each thread count on a fresh
# copy of $T/start-NAME.db (or an empty database), compares with N = 1
run_case() {
  local name=$1; shift
  for n in 1 2 4 8; do
    local db=$T/$name-$n.db
    rm -f "$db"
    [ -f "$T/start-$name.db" ] && cp "$T/start-$name.db" "$db"
    set +e
    "$CONCORD" "$@" --db "$db" --threads $n < "$T/stdin-$name" > /dev/null 2> "$T/$name-$n.err"
    echo "exit $?" >> "$T/$name-$n.err"
    set -e
    sed -i "s|$name-$n\.db|$name-N.db|g" "$T/$name-$n.err"
    canonical "$db" "$T/$name-$n.dump"
    if [ $n -ne 1 ]; then
      cmp -s "$T/$name-1.dump" "$T/$name-$n.dump" ||
        fail "$name: the database after --threads $n differs from --threads 1: $(diff "$T/$name-1.dump" "$T/$name-$n.dump" | head -4 | cut -c1-200)"
      cmp -s "$T/$name-1.err" "$T/$name-$n.err" ||
        fail "$name: the messages after --threads $n differ from --threads 1: $(diff "$T/$name-1.err" "$T/$name-$n.err" | head -4)"
    fi
    local models
    models=$(sqlite3 "$db" "SELECT name FROM models" 2> /dev/null || true)
    for m in $models; do
      "$CONCORD" verify --db "$db" --model "$m" > "$T/verify" 2>&1 ||
        fail "$name: verify of model $m after --threads $n: $(grep -v ' ok$' "$T/verify" | head -3)"
    done
  done
}

"$CONCORD" demo --dir "$T/d" --per-day 400 > /dev/null
: > "$T/stdin-demo"
run_case demo ingest --model g --classes premium,extra,class-1,class-2,juice,cull "$T/d/events.jsonl"
cp "$T/demo-1.db" "$T/start-demo_labels.db"
: > "$T/stdin-demo_labels"
run_case demo_labels label --model g "$T/d/labels.jsonl"

# the generator of the mixed inputs (deterministic)
/usr/bin/python3 - "$T" <<'EOF'
import json, random, sys
t = sys.argv[1]
rnd = random.Random(14)
classes = ["apple", "pear", "plum"]
def probs(m, k):
    rows = []
    for _ in range(m):
        w = [rnd.random() + 0.01 for _ in range(k)]
        s = sum(w)
        rows.append([round(x / s, 6) for x in w[:-1]] + [0])
        rows[-1][-1] = round(1 - sum(rows[-1][:-1]), 6)
    return rows
def event(i, model=None, m=3, k=3, day=None, label=None, seg=None):
    e = {"id": "e%d" % i, "ts": "2026-11-%02dT%02d:%02d:00Z" % (day or 1 + i % 9, i % 24, i % 60),
         "probs": probs(m, k)}
    if model: e["model"] = model
    if label is not None: e["label"] = label
    if seg: e["segment"] = seg
    return json.dumps(e)
bad = ['{"id":"x","ts":0,"probs":[[0.5,0.5,0', '{"ts":0,"probs":[[0.7,0.2,0.1]]}',
       '{"id":"x","ts":"2026-11-02T00:00:00Z","probs":[[0.5,0.5,0.5],[0.6,0.3,0.1],[1,0,0]]}',
       '{"id":"x","ts":"2026-11-02T00:00:00Z","probs":[[0.5,0.5],[0.5,0.5],[1,0]]}',
       '{"id":"x","ts":"2026-11-02T00:00:00Z","probs":[[1,0,0],[1,0,0],[1,0,0]],"label":"fig"}',
       '{"id":"x","ts":"2026-11-02T00:00:00Z","probs":[[1,0,0],[1,0,0],[1,0,0]],"label":7}',
       'not json at all', '{"id":"x","ts":"1999-01-01T00:00:00Z","probs":[[1,0,0],[1,0,0],[1,0,0]]}']
with open(t + "/mixed.jsonl", "w") as f:
    for i in range(5000):
        r = rnd.random()
        if r < 0.03:
            f.write(rnd.choice(bad) + "\n")
        elif r < 0.05:
            f.write(rnd.choice(["", "   ", "\t \r"]) + "\n")
        elif r < 0.09:
            f.write(event(rnd.randrange(max(i, 1))) + "\n")          # an earlier id again
        elif r < 0.15:
            f.write(event(i, model="two", m=2, k=4) + "\n")
        else:
            lab = None
            u = rnd.random()
            if u < 0.2: lab = rnd.randrange(3)
            elif u < 0.35: lab = rnd.choice(classes)
            f.write(event(i, label=lab, seg=rnd.choice([None, "north", "south", "east"])) + "\n")
        if i == 2500:
            f.write('{"id":"big","ts":0,"probs":[[1,0,0]],"pad":"' + "x" * (1 << 20) + '"}\n')
    f.write(event(99999))   # no final newline
with open(t + "/second.jsonl", "w") as f:
    for i in range(5000, 6500):
        f.write(event(i, day=12, label=rnd.choice(classes + [0, 1, None])) + "\n")
with open(t + "/stdin.jsonl", "w") as f:
    for i in range(6500, 7000):
        f.write(event(i, model="two", m=2, k=4) + "\n")
    f.write(bad[0] + "\n")
with open(t + "/labels_first.jsonl", "w") as f:
    for i in range(7000, 9000, 3):
        lab = rnd.choice([0, 1, 2, "plum", "pear"])
        f.write(json.dumps({"id": "e%d" % i, "label": lab}) + "\n")
    f.write('{"id":"nope","label":"fig"}\n{"label":1}\n\n')
with open(t + "/late.jsonl", "w") as f:
    for i in range(7000, 9000):
        f.write(event(i) + "\n")
EOF

# both models made first, with their class names
for name in mixed mixed_big_batch; do
  echo '{"id":"first","ts":"2026-11-01T00:00:00Z","probs":[[1,0,0],[1,0,0],[1,0,0]]}' |
    "$CONCORD" ingest --db "$T/start-$name.db" --model one --classes apple,pear,plum - 2> /dev/null
  echo '{"id":"first","ts":"2026-11-01T00:00:00Z","probs":[[1,0,0,0],[1,0,0,0]]}' |
    "$CONCORD" ingest --db "$T/start-$name.db" --model two --classes a,b,c,d - 2> /dev/null
done
cp "$T/stdin.jsonl" "$T/stdin-mixed"
run_case mixed ingest --model one --batch 7 "$T/mixed.jsonl" "$T/second.jsonl" - "$T/d"
grep -q 'exit 3' "$T/mixed-1.err" || fail "mixed: a directory among the inputs should be exit 3: $(tail -3 "$T/mixed-1.err")"
[ "$(sqlite3 "$T/mixed-4.db" "SELECT count(*) FROM rejects WHERE line = 2502 AND source LIKE '%/mixed.jsonl' AND reason LIKE 'line is % bytes, longer than%'")" = 1 ] ||
  fail "mixed: the over-long line should be refused by its number (2502)"
[ "$(sqlite3 "$T/mixed-4.db" "SELECT count(*) FROM rejects WHERE source = '<stdin>'")" = 1 ] ||
  fail "mixed: the bad line of standard input should be refused"
[ "$(sqlite3 "$T/mixed-4.db" "SELECT count(*) FROM models")" = 2 ] || fail "mixed: expected two models"

cp "$T/stdin.jsonl" "$T/stdin-mixed_big_batch"
run_case mixed_big_batch ingest --model one --quiet "$T/mixed.jsonl" "$T/second.jsonl" -

: > "$T/stdin-strict"
run_case strict ingest --model one --classes apple,pear,plum --strict "$T/mixed.jsonl"
grep -q 'exit 1' "$T/strict-1.err" || fail "strict: expected exit 1"

: > "$T/stdin-range"
run_case range ingest --model one --classes apple,pear,plum --ts-range 2026-11-03,2026-11-06 "$T/second.jsonl" "$T/mixed.jsonl"

# labels first (they wait), then their events (the waiting labels are applied)
"$CONCORD" ingest --db "$T/start-late.db" --model one --classes apple,pear,plum --quiet "$T/mixed.jsonl" 2> /dev/null || true
"$CONCORD" label --db "$T/start-late.db" --model one --threads 1 "$T/labels_first.jsonl" 2> /dev/null || true
: > "$T/stdin-late"
run_case late ingest --model one "$T/late.jsonl"
grep -q 'waiting labels applied' "$T/late-1.err" || fail "late: no waiting labels were applied: $(cat "$T/late-1.err")"
: > "$T/stdin-labels_first"
cp "$T/late-1.db" "$T/start-labels_first.db"
run_case labels_first label --model one --batch 5 "$T/labels_first.jsonl" "$T/labels_first.jsonl"

# an endless line (/dev/zero) between two files: given up after 64 MiB with
# its number, the other files stored
: > "$T/stdin-zero"
run_case zero ingest --model one --classes apple,pear,plum "$T/second.jsonl" /dev/zero "$T/late.jsonl"
grep -q '/dev/zero:1: line longer than 64 MiB' "$T/zero-1.err" || fail "zero: $(cat "$T/zero-1.err")"

# the comparisons can fail: a database with one event more is told apart
canonical "$T/mixed-2.db" "$T/a.dump"
"$CONCORD" ingest --db "$T/mixed-2.db" --model one --threads 2 "$T/late.jsonl" 2> /dev/null || true
canonical "$T/mixed-2.db" "$T/b.dump"
if cmp -s "$T/a.dump" "$T/b.dump"; then fail "the canonical dump does not see new rows"; fi

if [ $fails -ne 0 ]; then echo "threads_ingest: $fails failures" >&2; exit 1; fi
echo "threads_ingest: ok (9 inputs x threads 1, 2, 4, 8: equal databases, messages and exits)"
