#!/usr/bin/env python3
"""Write weather_warm_dry.csv, an INVENTED variant of ../weather.csv for the batch demo: every air
temperature 2.5 degC warmer, relative humidity 12 points lower (floored at 5 %), precipitation
scaled by 0.6; shortwave and wind unchanged, gaps kept as gaps. No station measured it.

Python standard library only; deterministic, so every run writes a byte-identical file.
"""

import csv
import os

HERE = os.path.dirname(os.path.abspath(__file__))


def shifted(value, change):
    """Apply `change` to a cell, keeping empty cells (gaps) empty."""
    return "" if value.strip() == "" else change(float(value))


def main():
    src = os.path.join(HERE, "..", "weather.csv")
    dst = os.path.join(HERE, "weather_warm_dry.csv")
    with open(src, newline="") as f, open(dst, "w", newline="") as g:
        rows = csv.DictReader(f)
        out = csv.writer(g, lineterminator="\n")
        out.writerow(rows.fieldnames)
        for r in rows:
            r["t_air_c"] = shifted(r["t_air_c"], lambda t: f"{t + 2.5:.1f}")
            r["rh_percent"] = shifted(r["rh_percent"], lambda h: f"{max(h - 12.0, 5.0):.1f}")
            r["precip_mm"] = shifted(r["precip_mm"], lambda p: f"{p * 0.6:.1f}")
            out.writerow([r[k] for k in rows.fieldnames])


if __name__ == "__main__":
    main()
