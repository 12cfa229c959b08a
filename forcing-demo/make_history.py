#!/usr/bin/env python3
"""Write atmosphere_history.csv for the isodisc demo: an ILLUSTRATIVE, INVENTED atmospheric history
of CO2 (umol mol-1) and its d13C (permil VPDB), one row per year from 1850 to 2025.

The curves are smooth shapes chosen to look like the industrial-era record in broad outline --
CO2 rising from about 285 to 425 umol mol-1 and d13C falling from about -6.4 to -8.6 permil, ever
faster (the Suess effect) -- but they are not a measured record and must not be used as one.

Python standard library only; deterministic.
"""

import math
import os

HERE = os.path.dirname(os.path.abspath(__file__))


def main():
    rows = ["year,co2,d13c"]
    for year in range(1850, 2026):
        x = (year - 1850) / 175.0  # 0 in 1850, 1 in 2025
        # An accelerating rise: mostly exponential growth after about 1950.
        shape = (math.exp(2.2 * x) - 1.0) / (math.exp(2.2) - 1.0)
        co2 = 285.0 + 140.0 * shape
        d13c = -6.4 - 2.2 * shape
        rows.append(f"{year},{co2:.2f},{d13c:.3f}")
    with open(os.path.join(HERE, "atmosphere_history.csv"), "w", encoding="ascii") as f:
        f.write("\n".join(rows) + "\n")


if __name__ == "__main__":
    main()
