#!/usr/bin/env python3
"""Writes the large invented inputs that the speed figures of README.md use (standard library
only, seeded, so every run writes the same bytes):

  leaf_rows.csv     N rows of leaf conditions for `isodisc leaf --input` (t_leaf, ppfd, vpd, ca)
  keeling_rows.csv  N canopy-air samples in N/100 groups for `isodisc keeling --by group`

Usage: python3 runner/benches/make_inputs.py OUT_DIR [N]   (N defaults to 1,000,000)
"""
import math
import os
import random
import sys


def leaf_rows(path, n, rng):
    with open(path, "w", newline="") as f:
        f.write("t_leaf,ppfd,vpd,ca\n")
        for _ in range(n):
            t = rng.uniform(5.0, 38.0)
            q = rng.choice([0.0, rng.uniform(0.0, 2200.0)]) if rng.random() < 0.1 else rng.uniform(50.0, 2200.0)
            d = rng.uniform(0.2, 4.0)
            c = rng.uniform(200.0, 1000.0)
            f.write(f"{t:.2f},{q:.1f},{d:.3f},{c:.1f}\n")


def keeling_rows(path, n, rng):
    groups = max(1, n // 100)
    per = n // groups
    with open(path, "w", newline="") as f:
        f.write("group,time,co2,d13c\n")
        for g in range(groups):
            source = rng.uniform(-30.0, -22.0)
            for k in range(per):
                # Two-source mixing of background air (410 µmol/mol, -8.5 ‰) with a source.
                co2 = 410.0 + rng.uniform(0.0, 120.0)
                frac = (co2 - 410.0) / co2
                d13c = (1.0 - frac) * -8.5 + frac * source + rng.gauss(0.0, 0.05)
                minutes = g * 1440 + 19 * 60 + k * 5
                dd, mm = divmod(minutes, 1440)
                y, doy = 2020 + dd // 365, dd % 365
                mon, dom = _month_day(doy)
                f.write(
                    f"night-{g:05d},{y:04d}-{mon:02d}-{dom:02d}T{mm // 60:02d}:{mm % 60:02d},"
                    f"{co2:.2f},{d13c:.3f}\n"
                )


def _month_day(doy):
    lengths = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]
    m = 0
    while doy >= lengths[m]:
        doy -= lengths[m]
        m += 1
    return m + 1, doy + 1


def main():
    out = sys.argv[1]
    n = int(sys.argv[2]) if len(sys.argv) > 2 else 1_000_000
    os.makedirs(out, exist_ok=True)
    leaf_rows(os.path.join(out, "leaf_rows.csv"), n, random.Random(11))
    keeling_rows(os.path.join(out, "keeling_rows.csv"), n, random.Random(12))


if __name__ == "__main__":
    main()
