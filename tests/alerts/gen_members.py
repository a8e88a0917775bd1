#!/usr/bin/env python3
"""gen_members.py - invented events for the member- and class-scoped alert
tests: three members, four classes, --per-day events a UTC day from --start,
every event labelled, drawn with a fixed seed (Python's random.Random).

Each member is right with probability 0.85 and then puts 0.7 on the true
class; when wrong it puts 0.7 on another class chosen at random. Day kinds
(comma-separated --pattern):
  clean         as above
  broken:I      member I answers at random (a replaced model file), the
                others as usual
  miss:C        on events of class C every member answers class (C+1) % 4
                with probability 0.6 (the ensemble loses that class's recall)
  small         as clean, but only --per-day // 8 events
  weak          members 1 and 2 are right with probability 0.45 only, so the
                average of the three does no better than member 0 alone

usage: gen_members.py OUT --start YYYY-MM-DD --pattern clean,...,broken:1
       [--per-day N] [--seed S]
"""
import argparse
import datetime
import json
import random

p = argparse.ArgumentParser()
p.add_argument("out")
p.add_argument("--start", required=True)
p.add_argument("--pattern", required=True)
p.add_argument("--per-day", type=int, default=400)
p.add_argument("--seed", type=int, default=7)
a = p.parse_args()
K, M = 4, 3
rng = random.Random(a.seed)
start = datetime.datetime.strptime(a.start, "%Y-%m-%d").replace(tzinfo=datetime.timezone.utc)


def row(top):
    r = [0.1] * K
    r[top] = 0.7
    return r


with open(a.out, "w") as f:
    for d, kind in enumerate(a.pattern.split(",")):
        n = a.per_day // 8 if kind == "small" else a.per_day
        for i in range(n):
            ts = start + datetime.timedelta(days=d, seconds=30 + i * (86000 // n))
            y = rng.randrange(K)
            probs = []
            for m in range(M):
                if kind == f"broken:{m}":
                    top = rng.randrange(K)
                elif kind.startswith("miss:") and y == int(kind[5:]) and rng.random() < 0.6:
                    top = (y + 1) % K
                elif rng.random() < (0.45 if kind == "weak" and m > 0 else 0.85):
                    top = y
                else:
                    top = rng.choice([c for c in range(K) if c != y])
                probs.append(row(top))
            ev = {"id": f"d{d:02d}-{i:05d}", "ts": ts.strftime("%Y-%m-%dT%H:%M:%SZ"),
                  "probs": probs, "label": y}
            f.write(json.dumps(ev, separators=(",", ":")) + "\n")
