#!/usr/bin/env python3
"""The leaf of `isodisc leaf --input FILE --set g0=G0 --format csv` written with numpy and pyarrow,
for timing the command against a vectorised script of the same equations, side by side.

Same inputs and settings as the command with default C3 parameters: the columns t_leaf (degC),
ppfd (umol m-2 s-1), vpd (kPa) and ca (umol mol-1); pressure 101.325 kPa, O2 210 mmol mol-1,
d13C of the air -8.5 permil, soil beta 1, growth temperature 25 degC; acclimated temperature set
(Kattge & Knorr 2007), NADPH-limited electron transport, no boundary layer, finite mesophyll
conductance, no TPU limit, the comprehensive C3 discrimination. The equations follow the model's
code (model/src/leaf/{c3,solve,stomata}.rs, model/src/temperature.rs, model/src/discrimination.rs):
FvCB demand with mesophyll conductance through the quadratic in A, Medlyn stomata with g0, and the
root of A(ci) - gs/1.6 (cs - ci) in ci found in a bracket by vectorised Illinois (regula falsi)
iterations to 1e-9 umol mol-1, as the model's Brent search is.

Usage:
  leaf_numpy.py IN.csv OUT.csv [--g0 G0]          solve and write OUT.csv (pyarrow CSV)
  leaf_numpy.py --compare OURS.csv ISODISC.csv    largest differences, column by column

Needs numpy and pyarrow (not needed by any test).
"""
import argparse
import sys

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv

R = 8.314
T25 = 298.15
# Default C3 parameters (`isodisc leaf --list-params` shows them in use).
VCMAX25, RD25, THETA, ALPHA = 60.0, 0.9, 0.7, 0.3
KC25, KO25, GSTAR25 = 272.38, 165.82, 37.43
EA_KC, EA_KO, EA_GSTAR, EA_RD = 80_990.0, 23_720.0, 24_420.0, 46_390.0
HA_V, HA_J, HD = 71_513.0, 49_884.0, 200_000.0
G1, GM25, HA_GM, HD_GM, DS_GM = 4.1, 0.25, 49_600.0, 437_400.0, 1_400.0
AB, A, ES, AL, B, F = 2.9, 4.4, 1.1, 0.7, 29.0, 11.6
PRESSURE, O2, D13C_AIR, T_GROWTH = 101.325, 210.0, -8.5, 25.0
CI_TOL = 1e-9

COLUMNS = ["t_leaf", "ppfd", "vpd", "ca", "pressure", "o2", "d13c_air", "soil_beta", "t_growth",
           "a_net", "rd", "g_s", "c_s", "c_i", "c_c", "ci_ca", "discrimination", "d13c_assimilate"]


def arrhenius(ea, tk):
    return np.exp(ea * (tk - T25) / (R * T25 * tk))


def peaked(ha, hd, ds, tk):
    num = 1.0 + np.exp((T25 * ds - hd) / (R * T25))
    return arrhenius(ha, tk) * num / (1.0 + np.exp((tk * ds - hd) / (R * tk)))


def smaller_root(a, b, c):
    """Smaller root of a x^2 + b x + c (a > 0 scalar), as model/src/numerics.rs takes it."""
    disc = b * b - 4.0 * a * c
    near = (disc < 0.0) & (disc > -1e-12 * b * b)
    q = -0.5 * (b + np.sign(b) * np.sqrt(np.maximum(disc, 0.0)))
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.minimum(q / a, np.where(q == 0.0, 0.0, c / q))
    r = np.where(near, -b / (2.0 * a), r)
    return np.where(disc < 0.0, np.where(near, r, np.nan), r)


def solve(t, ppfd, vpd, ca, g0):
    tk = t + 273.15
    tg = min(max(T_GROWTH, 11.0), 35.0)
    kc = KC25 * arrhenius(EA_KC, tk) * 101.325 / PRESSURE
    ko = KO25 * arrhenius(EA_KO, tk) * 101.325 / PRESSURE
    gstar = GSTAR25 * arrhenius(EA_GSTAR, tk) * O2 / 210.0
    rd = RD25 * arrhenius(EA_RD, tk)  # rd_light_factor 1
    vcmax = VCMAX25 * peaked(HA_V, HD, 668.39 - 1.07 * tg, tk)
    jmax = (2.59 - 0.035 * tg) * VCMAX25 * peaked(HA_J, HD, 659.70 - 0.75 * tg, tk)
    gm = GM25 * peaked(HA_GM, HD_GM, DS_GM, tk)
    ai = ALPHA * ppfd
    j = np.where(ai > 0.0, smaller_root(THETA, -(ai + jmax), ai * jmax), 0.0)
    kw = kc * (1.0 + O2 / ko)
    vj, kj = j / 4.0, 2.0 * gstar
    slope = 1.0 + G1 / np.sqrt(np.maximum(vpd, 0.05))

    # The leaf's CO2-independent terms, one array each, so the search can keep only the rows
    # not yet converged.
    leaf = dict(gm=gm, rd=rd, gstar=gstar, vcmax=vcmax, kw=kw, vj=vj, kj=kj, ca=ca, slope=slope)

    def net(p, v, k, ci):
        gm, rd = p["gm"], p["rd"]
        return smaller_root(1.0, -(gm * (ci + k) - rd + v), gm * (v * (ci - p["gstar"]) - rd * (ci + k)))

    def demand(p, ci):
        ar = net(p, p["vcmax"], p["kw"], ci)
        aj = net(p, p["vj"], p["kj"], ci)
        below = ar + p["rd"] < 0.0
        take_j = np.where(below, aj > ar, aj < ar)
        return np.where(take_j, aj, ar), take_j

    def residual(p, ci):
        a, _ = demand(p, ci)
        ca = p["ca"]
        gs = np.where(a > 0.0, g0 + 1.6 * p["slope"] * a / ca, g0)  # cs = ca: no boundary layer
        return a - gs / 1.6 * (ca - ci)

    # Bracket [0, ca] split at the guess ca(1 - 1/slope); widened above ca while r(hi) < 0.
    lo, hi = np.zeros_like(ca), ca.copy()
    rl, rh = residual(leaf, lo), residual(leaf, hi)
    guess = ca * (1.0 - 1.0 / slope)
    rg = residual(leaf, guess)
    neg = rg < 0.0
    lo, rl = np.where(neg, guess, lo), np.where(neg, rg, rl)
    hi, rh = np.where(neg, hi, guess), np.where(neg, rh, rg)
    for _ in range(60):
        w = rh < 0.0
        if not w.any():
            break
        lo, rl = np.where(w, hi, lo), np.where(w, rh, rl)
        hi = np.where(w, hi * 2.0, hi)
        rh = np.where(w, residual(leaf, hi), rh)
    # Illinois iterations (regula falsi, halving the kept end's residual when the same end moves
    # twice) on the rows not yet converged: a step below the tolerance, or the bracket within it.
    x = np.where(rg == 0.0, guess, 0.5 * (lo + hi))
    active = np.flatnonzero(rg != 0.0)
    p = {k: v[active] for k, v in leaf.items()}
    a_lo, a_hi, a_rl, a_rh, a_x = lo[active], hi[active], rl[active], rh[active], x[active]
    side = np.zeros(active.size, dtype=np.int8)
    for _ in range(200):
        if active.size == 0:
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            x_new = (a_lo * a_rh - a_hi * a_rl) / (a_rh - a_rl)
        bad = ~(np.isfinite(x_new) & (x_new > a_lo) & (x_new < a_hi))
        x_new[bad] = 0.5 * (a_lo[bad] + a_hi[bad])
        step = np.abs(x_new - a_x)
        a_x = x_new
        r = residual(p, a_x)
        up, down = r < 0.0, r > 0.0
        a_lo[up], a_rl[up] = a_x[up], r[up]
        a_hi[down], a_rh[down] = a_x[down], r[down]
        a_rh[up & (side == -1)] *= 0.5
        a_rl[down & (side == 1)] *= 0.5
        side[up], side[down] = -1, 1
        x[active] = a_x
        keep = ~((r == 0.0) | (a_hi - a_lo <= CI_TOL) | (step <= 0.5 * CI_TOL))
        if not keep.all():
            active = active[keep]
            p = {k: v[keep] for k, v in p.items()}
            a_lo, a_hi, a_rl, a_rh, a_x, side = (
                a_lo[keep], a_hi[keep], a_rl[keep], a_rh[keep], a_x[keep], side[keep])
    ci = x
    a, take_j = demand(leaf, ci)
    gs = np.where(a > 0.0, g0 + 1.6 * slope * a / ca, g0)
    cc = ci - a / gm
    with np.errstate(invalid="ignore"):
        delta = (AB * 0.0 + A * (ca - ci) + (ES + AL) * (ci - cc) + B * cc - F * gstar) / ca
    delta = np.where((a > 0.0) & (a + rd > 0.0), delta, np.nan)
    d13c = (D13C_AIR - delta) / (1.0 + delta / 1000.0)
    limitation = np.where(take_j, np.where(ppfd > 0.0, "electron-transport", "dark"), "rubisco")
    return a, rd, gs, ca, ci, cc, ci / ca, delta, d13c, limitation


def run(src, dst, g0):
    table = pacsv.read_csv(src)
    t, ppfd, vpd, ca = (table[c].to_numpy().astype(np.float64) for c in ["t_leaf", "ppfd", "vpd", "ca"])
    n = len(t)
    const = lambda v: np.full(n, v)
    a, rd, gs, cs, ci, cc, ci_ca, delta, d13c, lim = solve(t, ppfd, vpd, ca, g0)
    cols = [t, ppfd, vpd, ca, const(PRESSURE), const(O2), const(D13C_AIR), const(1.0),
            const(T_GROWTH), a, rd, gs, cs, ci, cc, ci_ca, delta, d13c]
    out = pa.table(cols + [lim], names=COLUMNS + ["limitation"])
    pacsv.write_csv(out, dst)


def compare(ours, theirs):
    x, y = pacsv.read_csv(ours), pacsv.read_csv(theirs)
    assert x.num_rows == y.num_rows, (x.num_rows, y.num_rows)
    worst = 0.0
    for c in COLUMNS:
        u, v = x[c].to_numpy(zero_copy_only=False), y[c].to_numpy(zero_copy_only=False)
        u, v = u.astype(np.float64), v.astype(np.float64)
        both_nan = np.isnan(u) & np.isnan(v)
        d = np.where(both_nan, 0.0, np.abs(u - v))
        d = np.where(np.isnan(d), np.inf, d)
        worst = max(worst, d.max())
        print(f"{c:16s} max |difference| {d.max():.3g}")
    same = (x["limitation"].to_numpy(zero_copy_only=False) == y["limitation"].to_numpy(zero_copy_only=False))
    print(f"limitation       {int((~same).sum())} rows differ")
    print(f"largest difference {worst:.3g}")


def main():
    p = argparse.ArgumentParser()
    p.add_argument("paths", nargs=2)
    p.add_argument("--g0", type=float, default=0.0)
    p.add_argument("--compare", action="store_true")
    args = p.parse_args()
    if args.compare:
        compare(*args.paths)
    else:
        run(args.paths[0], args.paths[1], args.g0)


if __name__ == "__main__":
    sys.exit(main())
