#!/usr/bin/python3
"""split_labels.py LABELS EVENTS_A OUTDIR: writes the k-th label line of each
id to OUTDIR/k.jsonl (k = 1, 2, ...) for the single store, and splits each
file between two hosts: the first label of an id goes to the host that does
NOT hold its event when the id's position is even (and to the holder when
odd), and every later label (a correction) to the other host than the one
before it. OUTDIR/k-a.jsonl and k-b.jsonl; prints the number of rounds."""
import json
import os
import sys

labels, events_a, out = sys.argv[1], sys.argv[2], sys.argv[3]
at_a = {json.loads(l)["id"] for l in open(events_a, encoding="utf-8") if l.strip()}
rounds, seen, host = {}, {}, {}
for n, line in enumerate(open(labels, encoding="utf-8")):
    if not line.strip():
        continue
    i = json.loads(line)["id"]
    k = seen.get(i, 0) + 1
    seen[i] = k
    if k == 1:
        holder = "a" if i in at_a else "b"
        other = "b" if holder == "a" else "a"
        h = other if n % 2 == 0 else holder
    else:
        h = "b" if host[i] == "a" else "a"
    host[i] = h
    rounds.setdefault(k, {"all": [], "a": [], "b": []})
    rounds[k]["all"].append(line)
    rounds[k][h].append(line)
for k, parts in rounds.items():
    for part, lines in parts.items():
        name = "%d.jsonl" % k if part == "all" else "%d-%s.jsonl" % (k, part)
        with open(os.path.join(out, name), "w", encoding="utf-8") as f:
            f.writelines(lines)
print(len(rounds))
