#!/usr/bin/env bash
# readonly_mount.sh — the reading commands (report in every format, review,
# show, verify --deep, alerts, backup, prune --dry-run) write nothing, so
# they work on a read-only mount and on a full disk, and leave the database
# file byte for byte as it was; writers fail there with exit 3 and leave it
# consistent. Needs root and mount(8); exit 77 (skipped) without them.
# Usage: readonly_mount.sh CONCORD
set -euo pipefail
C=$1
T=$(mktemp -d)
mounted=()
cleanup() {
  for m in "${mounted[@]}"; do umount "$m" 2> /dev/null || umount -l "$m" 2> /dev/null || true; done
  rm -rf "$T"
}
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
mkdir "$T/ro" "$T/full"
if [ "$(id -u)" != 0 ] || ! mount -t tmpfs -o size=32m tmpfs "$T/ro" 2> /dev/null; then
  echo "readonly_mount: mounting a tmpfs is not permitted here (needs root); skipped"
  exit 77
fi
mounted+=("$T/ro")

"$C" demo --dir "$T/d" --per-day 300 > /dev/null   # its database has alert states and notifications
M=apple-grader
ID=$(head -n 1 "$T/d/events.jsonl" | sed 's/.*"id":"\([^"]*\)".*/\1/')

reads() { # DB WHERE: every reading command must succeed
  local db=$1 where=$2 out=$T/out-$2
  mkdir -p "$out"
  "$C" report --db "$db" --model "$M" > /dev/null 2> "$T/e" || fail "$where: report: $(cat "$T/e")"
  "$C" report --db "$db" --model "$M" --format json -o "$out/r.json" 2> "$T/e" || fail "$where: report json: $(cat "$T/e")"
  "$C" report --db "$db" --model "$M" --format html -o "$out/r.html" 2> "$T/e" || fail "$where: report html: $(cat "$T/e")"
  "$C" review --db "$db" --model "$M" --from 2026-10-05T00:00:00Z --to 2026-10-12T00:00:00Z --format csv > /dev/null 2> "$T/e" || fail "$where: review: $(cat "$T/e")"
  "$C" show --db "$db" --model "$M" "$ID" > /dev/null 2> "$T/e" || fail "$where: show: $(cat "$T/e")"
  "$C" verify --db "$db" --model "$M" --deep > "$T/v" 2> "$T/e" || fail "$where: verify --deep: $(tail -n 2 "$T/v") $(cat "$T/e")"
  "$C" alerts --db "$db" --format json > "$out/alerts.json" 2> "$T/e" || fail "$where: alerts: $(cat "$T/e")"
  grep -q '"rule":' "$out/alerts.json" || fail "$where: alerts listed no rule state"
  "$C" prune --db "$db" --model "$M" --before 2026-10-08 --dry-run > /dev/null 2> "$T/e" || fail "$where: prune --dry-run: $(cat "$T/e")"
  "$C" backup --db "$db" "$out/copy.db" 2> "$T/e" || fail "$where: backup: $(cat "$T/e")"
  cmp -s "$out/r.json" "$T/ref.json" || fail "$where: the JSON report differs from the one read on a writable disk"
}
"$C" report --db "$T/d/demo.db" --model "$M" --format json -o "$T/ref.json"

# a read-only mount
cp "$T/d/demo.db" "$T/ro/demo.db"
sum_before=$(md5sum < "$T/ro/demo.db")
mount -o remount,ro "$T/ro"
reads "$T/ro/demo.db" read-only-mount
set +e
"$C" ingest --db "$T/ro/demo.db" --model "$M" "$T/d/events.jsonl" > /dev/null 2> "$T/e"; rc=$?
set -e
[ $rc = 3 ] || fail "ingest on a read-only mount: exit $rc, expected 3"
grep -q 'Read-only file system\|readonly' "$T/e" || fail "ingest on a read-only mount: unclear message: $(cat "$T/e")"
[ "$(md5sum < "$T/ro/demo.db")" = "$sum_before" ] || fail "the database on the read-only mount changed"
[ "$(ls "$T/ro")" = demo.db ] || fail "files appeared on the read-only mount: $(ls "$T/ro")"

# a full disk
mount -t tmpfs -o size=16m tmpfs "$T/full"
mounted+=("$T/full")
cp "$T/d/demo.db" "$T/full/demo.db"
sum_before=$(md5sum < "$T/full/demo.db")
dd if=/dev/zero of="$T/full/filler" bs=64k 2> /dev/null || true
[ "$(df --output=avail "$T/full" | tail -n 1 | tr -d ' ')" = 0 ] || fail "the small disk is not full"
reads "$T/full/demo.db" full-disk
[ "$(md5sum < "$T/full/demo.db")" = "$sum_before" ] || fail "reading commands changed the database on the full disk"
set +e
"$C" ingest --db "$T/full/demo.db" --model "$M" "$T/d/events.jsonl" "$T/d/events.jsonl" > /dev/null 2> "$T/e"; rc=$?
set -e
# every id is stored already, so this ingest may have nothing to write; a label run must write
"$C" label --db "$T/full/demo.db" --model "$M" "$T/d/labels.jsonl" > /dev/null 2>> "$T/e" || true
"$C" verify --db "$T/full/demo.db" --model "$M" --deep > "$T/v" 2> "$T/e" || fail "full disk: verify after failed writes: $(tail -n 2 "$T/v") $(cat "$T/e")"
rm -f "$T/full/filler"
"$C" verify --db "$T/full/demo.db" --model "$M" > /dev/null || fail "full disk: verify once space is back"

if [ $fails -ne 0 ]; then echo "readonly_mount: $fails failures" >&2; exit 1; fi
echo "readonly_mount: ok (report, review, show, verify --deep, alerts, backup and prune --dry-run on a read-only mount and on a full disk; the database files unchanged)"
