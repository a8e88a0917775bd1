"""json_roundtrip.py WINDOWS_JSON BITS_TXT REPORT_JSON

Reads the report windows printed by report/json_print.c with Python's json
module (the standard library's parser, whose float() is correctly rounded)
and checks that every number is, bit for bit, the double the report held
(BITS_TXT: C's %a of each number in document order; -0 may read back as 0,
which cJSON also prints as 0). Then checks that `concord report --format
json` (REPORT_JSON, the streamed writer) holds the same windows."""
import json
import struct
import sys


def numbers(v, out):
    if isinstance(v, bool) or v is None or isinstance(v, str):
        return
    if isinstance(v, (int, float)):
        out.append(v)
    elif isinstance(v, list):
        for x in v:
            numbers(x, out)
    elif isinstance(v, dict):
        for x in v.values():
            numbers(x, out)


def bits(x):
    return struct.pack('<d', float(x))


windows = json.load(open(sys.argv[1]))
held = [float.fromhex(line) for line in open(sys.argv[2]) if line.strip()]
read = []
numbers(windows, read)
if len(read) != len(held):
    sys.exit('FAIL: %d numbers in the JSON, %d held' % (len(read), len(held)))
bad = 0
for i, (r, h) in enumerate(zip(read, held)):
    if bits(r) != bits(h) and not (h == 0.0 and r == 0):
        bad += 1
        if bad <= 10:
            print('FAIL: number %d reads back as %r, the report held %r' % (i, r, h))
if bad:
    sys.exit('FAIL: %d of %d numbers differ' % (bad, len(read)))
streamed = json.load(open(sys.argv[3]))['windows']
if streamed != windows:
    sys.exit('FAIL: concord report --format json has other windows than the printer')
print('ok: %d numbers in %d windows read back bit for bit' % (len(read), len(windows)))
