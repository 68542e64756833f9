"""Writes a synthetic benchmark ledger: N rows, 500 suppliers, log-uniform amounts (Benford-like),
ISO dates over five years. Deterministic (fixed seed). Usage: gen_ledger.py ROWS OUT.csv"""
import random
import sys

rows, out = int(sys.argv[1]), sys.argv[2]
rng = random.Random(20261202)
names = [f"Bench Supplier {i:03d} Ltd" for i in range(500)]
with open(out, "w", newline="") as f:
    f.write("Supplier,Invoice No,Invoice Date,Amount\n")
    buf = []
    for i in range(rows):
        s = names[min(499, int(rng.paretovariate(1.2)) - 1) if rng.random() < 0.5 else rng.randrange(500)]
        day = rng.randrange(1826)
        y, d = 2021 + day // 366, day % 365
        m, dd = 1 + d // 31 % 12, 1 + d % 28
        amt = 10 ** rng.uniform(1, 5)
        buf.append(f"{s},B{i},{y}-{m:02d}-{dd:02d},{amt:.2f}\n")
        if len(buf) >= 100000:
            f.write("".join(buf))
            buf.clear()
    f.write("".join(buf))
