#!/usr/bin/env python3
"""gen_many_members.py — invented logs of a 12-member, 6-class ensemble with
long member and segment names, to check that the HTML page stays within its
width when there are many members. Deterministic (seeded); invented data.

Usage: gen_many_members.py OUT.jsonl      (prints the --members list)
"""
import json
import math
import random
import sys

M, K, DAYS, PER_DAY = 12, 6, 10, 200
FIRST = 1780012800  # 2026-05-29T00:00:00Z

rnd = random.Random(20260529)
with open(sys.argv[1], "w") as out:
    for day in range(DAYS):
        for i in range(PER_DAY):
            y = rnd.randrange(K)
            probs = []
            for _ in range(M):
                logit = [rnd.gauss(0.0, 1.0) for _ in range(K)]
                logit[y] += 2.5
                e = [math.exp(v) for v in logit]
                probs.append([v / sum(e) for v in e])
            ev = {"id": f"many-{day:02d}-{i:04d}", "ts": FIRST + day * 86400 + i * 400,
                  "segment": f"conveyor-line-{i % 4}-with-a-long-segment-name", "probs": probs}
            if i % 3 == 0:
                ev["label"] = y
            out.write(json.dumps(ev) + "\n")
print(",".join(f"member-with-a-long-name-{m:02d}" for m in range(M)))
