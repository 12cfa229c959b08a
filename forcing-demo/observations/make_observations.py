#!/usr/bin/env python3
"""Make INVENTED observations for the demo site from a demo run's daily.csv.

No instrument measured any of this: the files exist so that `isodisc keeling`, `isodisc compare`
and `isodisc plot` have something realistic-looking to work on. Python standard library only;
the same --seed gives the same files.

It writes, into --out (default: this folder):

* canopy_air.csv -- nightly canopy-air flask samples: columns time (local standard time),
  co2 (umol mol-1), d13c (permil VPDB), co2_sd (umol mol-1), d13c_sd (permil). Each sample is
  background air (--background-co2 at --background-d13c) plus respired CO2 carrying that day's
  predicted d13c_respiration, mixed by mass balance, plus measurement noise. 5-12 samples per
  night between 19:00 and 05:00, with a CO2 range of about 20-150 umol mol-1; a few nights have
  too few samples (2) or a tiny CO2 range (5-15 umol mol-1), so the quality flags show up.
* d13c_respiration_observed.csv -- daily "observed" d13C of ecosystem respiration: columns
  date, d13c_respiration (permil VPDB) = the prediction plus noise, with random and
  block gaps.
* d13c_bulk_leaf_observed.csv -- bulk leaf organic matter sampled every 60 days: columns start,
  end (the 45 days, both included, whose assimilate the leaves were built from), d13c_bulk_leaf
  (permil VPDB) = the GPP-weighted d13c_assimilate of those days (gpp x d13c_assimilate summed
  over the window / gpp summed, as `isodisc fit` predicts it) plus noise, and d13c_bulk_leaf_sd
  (permil). Its generator is seeded apart from the other files' so they stay as they were.

The run must have d13c_respiration, gpp and d13c_assimilate columns in daily.csv. Usage:

    isodisc run forcing-demo/site.toml --out results
    python3 forcing-demo/observations/make_observations.py --run results
"""

import argparse
import csv
import datetime as dt
import os
import random
import sys

COLUMN = "d13c_respiration"


def read_daily(run_dir):
    path = os.path.join(run_dir, "daily.csv")
    try:
        with open(path, newline="") as f:
            rows = list(csv.DictReader(f))
    except OSError as e:
        sys.exit(f"make_observations: cannot read {path}: {e}")
    if not rows or COLUMN not in rows[0]:
        known = ", ".join(rows[0].keys()) if rows else "(empty file)"
        sys.exit(
            f"make_observations: {path} has no column {COLUMN}; known: {known}.\n"
            "This run was made before isodisc predicted the d13C of respiration; "
            "re-run `isodisc run` with a version that writes it."
        )
    out = []
    for r in rows:
        value = r[COLUMN].strip()
        if value:
            out.append((dt.date.fromisoformat(r["period"]), float(value)))
    return out


def night_samples(rng, day, d13c_resp, cbg, dbg):
    """Samples of the night starting on the evening of `day`."""
    kind = rng.random()
    n = 2 if kind < 0.04 else rng.randint(5, 12)
    co2_range = rng.uniform(5, 15) if 0.04 <= kind < 0.09 else rng.uniform(20, 150)
    start = dt.datetime.combine(day, dt.time(19, 0))
    # Respired CO2 builds up through the night: sorted added amounts over a 10-hour window.
    added = sorted(rng.uniform(0.0, co2_range) for _ in range(n))
    added[0], added[-1] = 0.0, co2_range
    minutes = sorted(rng.sample(range(0, 600, 5), n))
    co2_sd, d13c_sd = 0.3, 0.08
    rows = []
    for m, a in zip(minutes, added):
        # Mass balance of 13C (in delta units, the approximation the Keeling plot itself makes).
        c = cbg + a
        d = (cbg * dbg + a * d13c_resp) / c
        rows.append(
            (
                (start + dt.timedelta(minutes=m)).strftime("%Y-%m-%dT%H:%M"),
                round(c + rng.gauss(0.0, co2_sd), 2),
                round(d + rng.gauss(0.0, d13c_sd), 3),
                co2_sd,
                d13c_sd,
            )
        )
    return rows


def read_daily_columns(run_dir, names):
    """(date, {name: value or None}) per day of daily.csv."""
    with open(os.path.join(run_dir, "daily.csv"), newline="") as f:
        rows = list(csv.DictReader(f))
    return [
        (
            dt.date.fromisoformat(r["period"]),
            {n: float(r[n]) if r[n].strip() else None for n in names},
        )
        for r in rows
    ]


def bulk_leaf_samples(rng, days, noise, every=60, window=45):
    """(start, end, value, sd) per bulk-leaf sample: the GPP-weighted d13C of the assimilate of
    the `window` days ending on each collection day, every `every` days, plus noise."""
    out = []
    for end in range(window - 1, len(days), every):
        sum_g = sum_gd = 0.0
        for _, v in days[end - window + 1 : end + 1]:
            g, d = v["gpp"], v["d13c_assimilate"]
            if g is not None and d is not None and g > 0:
                sum_g += g
                sum_gd += g * d
        if sum_g > 0:
            value = sum_gd / sum_g + rng.gauss(0.0, noise)
            out.append((days[end - window + 1][0], days[end][0], round(value, 2), noise))
    return out


def main():
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--run", required=True, help="folder written by `isodisc run --out`")
    p.add_argument("--out", default=os.path.dirname(os.path.abspath(__file__)))
    p.add_argument("--seed", type=int, default=13)
    p.add_argument("--background-co2", type=float, default=425.0)
    p.add_argument("--background-d13c", type=float, default=-8.6)
    p.add_argument("--noise", type=float, default=0.3, help="SD of observed dR noise (permil)")
    p.add_argument(
        "--bulk-leaf-noise", type=float, default=0.4, help="SD of bulk-leaf noise (permil)"
    )
    args = p.parse_args()

    daily = read_daily(args.run)
    rng = random.Random(args.seed)
    os.makedirs(args.out, exist_ok=True)

    with open(os.path.join(args.out, "canopy_air.csv"), "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["time", "co2", "d13c", "co2_sd", "d13c_sd"])
        for day, d13c in daily:
            w.writerows(
                night_samples(rng, day, d13c, args.background_co2, args.background_d13c)
            )

    # Gaps: one in four days at random, and a block of three weeks (an instrument failure).
    block = rng.randrange(max(1, len(daily) - 21))
    with open(os.path.join(args.out, "d13c_respiration_observed.csv"), "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["date", COLUMN])
        for i, (day, d13c) in enumerate(daily):
            if rng.random() < 0.25 or block <= i < block + 21:
                continue
            w.writerow([day.isoformat(), round(d13c + rng.gauss(0.0, args.noise), 3)])

    days = read_daily_columns(args.run, ["gpp", "d13c_assimilate"])
    leaf_rng = random.Random(f"{args.seed}-bulk-leaf")
    with open(os.path.join(args.out, "d13c_bulk_leaf_observed.csv"), "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["start", "end", "d13c_bulk_leaf", "d13c_bulk_leaf_sd"])
        for start, end, value, sd in bulk_leaf_samples(leaf_rng, days, args.bulk_leaf_noise):
            w.writerow([start.isoformat(), end.isoformat(), value, sd])


if __name__ == "__main__":
    main()
