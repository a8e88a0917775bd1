#!/usr/bin/env python3
"""gen_days.py - synthetic events for the alert tests (invented, tiny).

Two members, three classes, --per-day events per UTC day from --start, every
event labelled. Day kinds (comma-separated --pattern): "agree" (both members
give the same class, disagreement 0) or "split" (they always differ,
disagreement 1).
usage: gen_days.py OUT --start YYYY-MM-DD --pattern agree,split,... [--per-day N]
       [--prefix P]
"""
import argparse
import datetime
import json

p = argparse.ArgumentParser()
p.add_argument("out")
p.add_argument("--start", required=True)
p.add_argument("--pattern", required=True)
p.add_argument("--per-day", type=int, default=40)
p.add_argument("--prefix", default="e")
a = p.parse_args()
start = datetime.datetime.strptime(a.start, "%Y-%m-%d").replace(tzinfo=datetime.timezone.utc)
rows = {0: [0.8, 0.1, 0.1], 1: [0.1, 0.8, 0.1], 2: [0.1, 0.1, 0.8]}
with open(a.out, "w") as f:
    for d, kind in enumerate(a.pattern.split(",")):
        for i in range(a.per_day):
            ts = start + datetime.timedelta(days=d, seconds=60 + i * 60)
            c = i % 3
            other = c if kind == "agree" else (c + 1) % 3
            ev = {"id": f"{a.prefix}{d:02d}-{i:04d}", "ts": ts.strftime("%Y-%m-%dT%H:%M:%SZ"),
                  "probs": [rows[c], rows[other]], "label": c}
            f.write(json.dumps(ev, separators=(",", ":")) + "\n")
