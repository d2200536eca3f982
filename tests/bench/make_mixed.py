#!/usr/bin/python3
"""Write an invented campaign for bench_scale.sh: DB GRAPH ROWS.

Shaped like a stochastic simulator's archive (all invented, fixed seed): a switch, a level set, a
small integer input and three continuous inputs; every configuration run under three seeds, seeds
shared across configurations (common random numbers) and the run deterministic under its seed; a
run cost that varies; a skewed output whose noise grows with load, a zero-inflated queue, and a
latency that bends (quadratic in one input) with heavy-tailed noise; one row in a hundred
imported twice. See LICENSE.
"""
import math
import random
import sqlite3
import sys

GRAPH = """# Invented mixed campaign for the scale benchmark (tests/bench/make_mixed.py).
default effect 0.1 sd
default margin 0.1 sd
design independent
runseed seed
ledger cost cost
input sw bool
input mode levels {calm, busy, storm}
input k integer [1, 8]
input a real [0, 10]
input b real [0, 100]
input c real [0, 1]
output load real
output queue real
output latency real
noise independent queue
sw -> load
mode -> load
k -> load
a -> load
b -> queue
mode -> queue
sw -> queue
a -> latency
c -> latency
"""

SEEDS = 3          # runs per configuration
SHARED = 4000      # distinct seeds, reused across configurations


def run(cfg, index, seed):
    """One simulated run of configuration number index: deterministic under (index, seed)."""
    sw, mode, k, a, b, c = cfg
    r = random.Random(seed * 1000003 + index)
    common = random.Random(seed).gauss(0, 0.3)     # what the seed contributes to every run
    level = {"calm": 0.0, "busy": 1.0, "storm": 2.5}[mode]
    mean = 1 + 2 * sw + level + 0.3 * k + 0.4 * a
    load = mean + common + r.lognormvariate(0, 0.6) * (0.5 + 0.1 * mean)
    queue = 0.0 if r.random() < 0.4 else r.expovariate(1 / (0.02 * b + level + sw + 0.1))
    t = r.gauss(0, 1) / math.sqrt(r.gammavariate(1.5, 1 / 1.5))   # Student t, 3 df
    latency = 5 + 0.8 * (a - 5) ** 2 + 3 * c + common + t
    cost = 60 * (1 + 0.2 * k) * r.lognormvariate(0, 0.3)          # seconds of CPU
    return load, queue, latency, cost


def main():
    db_path, graph_path, rows = sys.argv[1], sys.argv[2], int(sys.argv[3])
    random.seed(20261205)
    with open(graph_path, "w") as g:
        g.write(GRAPH)
    db = sqlite3.connect(db_path)
    db.execute("CREATE TABLE runs (sw INTEGER, mode TEXT, k INTEGER, a REAL, b REAL, c REAL, "
               "load REAL, queue REAL, latency REAL, seed INTEGER, cost REAL)")
    batch, n, index = [], 0, 0
    while n < rows:
        index += 1
        cfg = (int(random.random() < 0.25), random.choice(("calm", "busy", "storm")),
               random.randint(1, 8), random.uniform(0, 10), random.uniform(0, 100),
               random.random())
        for _ in range(SEEDS):
            seed = random.randrange(SHARED)
            load, queue, latency, cost = run(cfg, index, seed)
            row = cfg + (load, queue, latency, seed, cost)
            batch.append(row)
            n += 1
            if random.random() < 0.01:      # imported twice
                batch.append(row)
                n += 1
        if len(batch) >= 50000:
            db.executemany("INSERT INTO runs VALUES (?,?,?,?,?,?,?,?,?,?,?)", batch)
            batch = []
    if batch:
        db.executemany("INSERT INTO runs VALUES (?,?,?,?,?,?,?,?,?,?,?)", batch)
    db.commit()
    db.close()


if __name__ == "__main__":
    main()
