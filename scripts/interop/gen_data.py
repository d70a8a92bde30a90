"""Writes the invented job-coaching data set of the interoperability corpus.

Usage: gen_data.py OUT.csv [--rows N] [--seed S]

The truth: earnings = 100 + 20*coached + 15*coached*(client_type ==
"returning") + 0.8*baseline + noise (sd 12), rounded to 2 decimals. The
columns beyond the base ones feed particular families:

  hours_a, hours_b  two parts of hours (hours_a whole, hours_b in halves, so
                    hours_a + hours_b == hours exactly in binary floating
                    point)
  earnings_raw      earnings before rounding, 6 decimals, never a tie at
                    the third decimal: ROUND(earnings_raw, 2) == earnings
  visit_date        2024-03-05 for row 1, later dates after
  consented         TRUE/FALSE, used by no model
"""

import argparse
import csv
import datetime as dt
import random
from decimal import Decimal, ROUND_HALF_UP

SITES = ["Northgate", "Riverside", "Hillcrest", "Eastfield", "Lakeview",
         "Westbrook"]


def make(n, seed):
    rnd = random.Random(seed)
    # Balanced design: half new, half returning; half of each coached.
    types = ["new"] * (n // 2) + ["returning"] * (n - n // 2)
    rnd.shuffle(types)
    coached = [0] * n
    for t in ("new", "returning"):
        idx = [i for i in range(n) if types[i] == t]
        rnd.shuffle(idx)
        for i in idx[: len(idx) // 2]:
            coached[i] = 1
    rows = []
    day = dt.date(2024, 3, 5)
    for i in range(n):
        baseline = round(rnd.uniform(150, 450), 2)
        baseline_d = Decimal(f"{baseline:.2f}")
        hours_a = rnd.randint(4, 20)
        hours_b = rnd.randint(0, 16) / 2
        ret = 1 if types[i] == "returning" else 0
        c = coached[i]
        while True:
            noise = rnd.gauss(0, 12)
            raw = (Decimal(100) + 20 * c + 15 * c * ret
                   + Decimal("0.8") * baseline_d
                   + Decimal(f"{noise:.6f}")).quantize(Decimal("0.000001"))
            # keep clear of a tie at the third decimal
            frac = (raw * 1000) % 10
            if abs(frac - 5) > Decimal("0.01") and raw > 0:
                break
        earnings = raw.quantize(Decimal("0.01"), rounding=ROUND_HALF_UP)
        if i > 0:
            day = day + dt.timedelta(days=rnd.randint(0, 3))
        rows.append({
            "client_id": 1001 + i,
            "site": SITES[rnd.randrange(len(SITES))],
            "client_type": types[i],
            "coached": c,
            "baseline": f"{baseline_d}",
            "hours_a": hours_a,
            "hours_b": f"{hours_b:g}",
            "hours": f"{hours_a + hours_b:g}",
            "earnings": f"{earnings}",
            "earnings_raw": f"{raw}",
            "visit_date": day.isoformat(),
            "consented": "TRUE" if rnd.random() < 0.85 else "FALSE",
        })
    return rows


FIELDS = ["client_id", "site", "client_type", "coached", "baseline",
          "hours_a", "hours_b", "hours", "earnings", "earnings_raw",
          "visit_date", "consented"]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("out")
    ap.add_argument("--rows", type=int, default=60)
    ap.add_argument("--seed", type=int, default=20240305)
    a = ap.parse_args()
    rows = make(a.rows, a.seed)
    with open(a.out, "w", newline="", encoding="utf-8") as f:
        w = csv.DictWriter(f, fieldnames=FIELDS, lineterminator="\n")
        w.writeheader()
        w.writerows(rows)


if __name__ == "__main__":
    main()
