#!/usr/bin/env bash
# outputs.sh — a failed write is never reported as success: every output
# (report text/json/html, review text/json/csv, show, rules init, check
# --format json, the demo's files) written to a full device or a full disk
# exits 3 naming the file, and leaves no partial or temporary file behind;
# ingest into a database on a full disk fails clearly and the database
# stays consistent. The disk-full part mounts a small tmpfs (root only) and
# is skipped with a message when mounting is refused.
# Usage: outputs.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
SMALL=$T/small
cleanup() { mountpoint -q "$SMALL" 2>/dev/null && umount "$SMALL"; rm -rf "$T"; }
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

# expect_io NAME TARGET_SHOWN -- command...: exit 3 and the target named on stderr
expect_io() {
  local name=$1 shown=$2
  shift 3
  set +e
  "$@" > "$T/out" 2> "$T/err"
  local rc=$?
  set -e
  [ $rc -eq 3 ] || fail "$name: exit $rc, expected 3 ($(head -c 300 "$T/err"))"
  grep -qF "$shown" "$T/err" || fail "$name: stderr does not name $shown: $(head -c 300 "$T/err")"
}

"$CONCORD" demo --dir "$T/demo" --per-day 30 > /dev/null
DB=$T/demo.db
cp "$T/demo/demo.db" "$DB"
M=(--db "$DB" --model apple-grader)
R=(--from 2000-01-01 --to 2099-12-31)

# 1. a full device (/dev/full): written in place, every failure caught
for f in text json html; do
  expect_io "report $f /dev/full" /dev/full -- "$CONCORD" report "${M[@]}" --format $f -o /dev/full
  expect_io "report $f stdout full" "standard output" -- sh -c '"$0" "$@" > /dev/full' \
    "$CONCORD" report "${M[@]}" --format $f
done
for f in text json csv; do
  expect_io "review $f /dev/full" /dev/full -- "$CONCORD" review "${M[@]}" "${R[@]}" --where all --format $f -o /dev/full
done
id=$(sqlite3 "$DB" "SELECT id FROM events LIMIT 1")
expect_io "show stdout full" "standard output" -- sh -c '"$0" "$@" > /dev/full' "$CONCORD" show "${M[@]}" "$id"
expect_io "rules init /dev/full" /dev/full -- "$CONCORD" rules init -o /dev/full --force
expect_io "rules paths stdout full" "standard output" -- sh -c '"$0" "$@" > /dev/full' "$CONCORD" rules paths
"$CONCORD" rules init -o "$T/rules.json"
expect_io "check json stdout full" "standard output" -- sh -c '"$0" "$@" > /dev/full' \
  "$CONCORD" check --db "$DB" --rules "$T/rules.json" --day 2026-10-10 --dry-run --format json

# 2. a regular file replaced only when complete; a new file is owner-only
"$CONCORD" report "${M[@]}" --format json -o "$T/r.json"
[ "$(stat -c %a "$T/r.json")" = 600 ] || fail "new output file mode $(stat -c %a "$T/r.json"), expected 600"
chmod 644 "$T/r.json"
"$CONCORD" report "${M[@]}" --format json -o "$T/r.json"
[ "$(stat -c %a "$T/r.json")" = 644 ] || fail "a replaced output file must keep its mode 644"
python3 -c 'import json,sys; json.load(open(sys.argv[1]))' "$T/r.json" || fail "report json is not JSON"
expect_io "output into a missing folder" "$T/nope/r.txt" -- "$CONCORD" report "${M[@]}" -o "$T/nope/r.txt"
mkdir "$T/adir"
expect_io "output onto a directory" "$T/adir" -- "$CONCORD" report "${M[@]}" -o "$T/adir"
set +e
"$CONCORD" rules init -o "$T/rules.json" 2> "$T/err"; rc=$?
set -e
[ $rc -eq 3 ] && grep -q -- "--force" "$T/err" || fail "rules init over an existing file: exit $rc, $(cat "$T/err")"

# 3. a full disk: a small tmpfs, filled
mkdir "$SMALL"
if ! mount -t tmpfs -o size=4m tmpfs "$SMALL" 2> "$T/mount.err"; then
  echo "SKIP disk-full part: cannot mount a tmpfs here ($(cat "$T/mount.err"))"
else
  cp "$DB" "$SMALL/db"
  "$CONCORD" report --db "$SMALL/db" --model apple-grader --format text -o "$SMALL/keep.txt"
  before=$(md5sum < "$SMALL/keep.txt")
  n0=$(sqlite3 "$SMALL/db" "SELECT count(*) FROM events")
  dd if=/dev/zero of="$SMALL/slack" bs=64k count=8 2> /dev/null
  dd if=/dev/zero of="$SMALL/filler" bs=64k 2> /dev/null || true # until the disk is full
  for f in text json html; do
    expect_io "report $f full disk" "$SMALL/r.$f" -- "$CONCORD" report "${M[@]}" --format $f -o "$SMALL/r.$f"
    [ ! -e "$SMALL/r.$f" ] || fail "report $f full disk: a partial $SMALL/r.$f was left"
  done
  expect_io "report replacing a file on a full disk" "$SMALL/keep.txt" -- \
    "$CONCORD" report "${M[@]}" --format html -o "$SMALL/keep.txt"
  [ "$(md5sum < "$SMALL/keep.txt")" = "$before" ] || fail "a failed write damaged the file it was to replace"
  for f in json csv; do
    expect_io "review $f full disk" "$SMALL/v.$f" -- "$CONCORD" review "${M[@]}" "${R[@]}" --where all --format $f -o "$SMALL/v.$f"
    [ ! -e "$SMALL/v.$f" ] || fail "review $f full disk: a partial file was left"
  done
  expect_io "demo on a full disk" "$SMALL/demo" -- "$CONCORD" demo --dir "$SMALL/demo" --per-day 30
  left=$(find "$SMALL" -name '.*.??????' | wc -l)
  [ "$left" = 0 ] || fail "temporary files left on the full disk: $(find "$SMALL" -name '.*.??????')"
  # ingest into the database on the full disk: a clear error, then a consistent database
  python3 - "$T/more.jsonl" <<'PY'
import json, sys
with open(sys.argv[1], "w") as f:
    for i in range(20000):
        p = [[0.6, 0.3, 0.05, 0.03, 0.01, 0.01]] * 5
        f.write(json.dumps({"id": f"more-{i}", "ts": f"2026-10-0{1 + i % 9}T12:00:00Z",
                            "segment": "x" * 200, "probs": p}) + "\n")
PY
  rm -f "$SMALL/slack" # room to open the database, not to store the batch
  set +e
  "$CONCORD" ingest --db "$SMALL/db" --model apple-grader --batch 100000 "$T/more.jsonl" > /dev/null 2> "$T/err"
  rc=$?
  set -e
  [ $rc -eq 3 ] || fail "ingest on a full disk: exit $rc, expected 3: $(cat "$T/err")"
  echo "ingest on a full disk said: $(head -c 300 "$T/err")"
  grep -qiE "full|space|disk I/O" "$T/err" || fail "ingest on a full disk: unclear message: $(cat "$T/err")"
  rm -f "$SMALL/filler"
  "$CONCORD" verify --db "$SMALL/db" --model apple-grader > "$T/verify" 2>&1 || fail "verify after a full disk: $(cat "$T/verify")"
  n1=$(sqlite3 "$SMALL/db" "SELECT count(*) FROM events")
  [ "$n1" = "$n0" ] || fail "ingest on a full disk stored $((n1 - n0)) events of a failed batch"
fi

[ $fails -eq 0 ] && echo "outputs: all cases passed"
exit $((fails > 0))
