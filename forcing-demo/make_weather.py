#!/usr/bin/env python3
"""Write the demo weather files for isodisc. THE DATA ARE INVENTED for the demo: no station
measured them, and they must not be used as observations of any real place.

Outputs (run from anywhere: paths are relative to this script's folder):

1. weather.csv -- one year (2025-01-01T00:00 to 2025-12-31T23:00, local standard time UTC+2,
   timestamps mark the START of each hour) for an invented savanna-woodland mosaic at about
   15 S, 28 E, 1100 m. Columns in isodisc's own naming:
       time, t_air_c (degC), rh_percent (%), sw_w_m2 (W m-2), precip_mm (mm per hour), wind_m_s
   Wet season November-March, dry season May-September. Temperature and humidity follow a
   seasonal and a diurnal cycle; shortwave is clear-sky radiation from simple solar geometry
   times a cloudiness factor with day-to-day weather noise; rain falls in clustered events,
   mostly in wet-season afternoons. A few short gaps (empty cells, 1-2 h) and one long gap
   (6 h, all variables) exercise the reader's gap handling.

2. tower/halfhourly.csv -- six weeks (2025-06-01 to 2025-07-12) of half-hourly data for a second
   invented site, a mountain grassland at about 47 N, 11 E, 900 m, UTC+1, in the flux-tower
   community's names and units: TIMESTAMP_START, TIMESTAMP_END (YYYYMMDDHHMM), TA_F (degC),
   VPD_F (hPa), SW_IN_F (W m-2), PA_F (kPa), P_F (mm), WS_F (m s-1); -9999 marks a missing value
   (a few single ones are included), and night shortwave carries small negative sensor offsets.

Solar geometry (common practice): declination after Cooper (1969), equation of time after
Spencer (1971), solar constant 1361 W m-2 (Kopp & Lean 2011); clear-sky transmission 0.76 per
air mass (an invented round number). Vapour pressure from FAO-56 (Allen et al. 1998).

Python standard library only; seeded, so every run writes byte-identical files.
"""

import math
import os
import random
from datetime import datetime, timedelta

SEED = 20250101
S0 = 1361.0  # W m-2
HERE = os.path.dirname(os.path.abspath(__file__))


def es_kpa(t_c):
    """FAO-56 saturation vapour pressure, kPa."""
    return 0.6108 * math.exp(17.27 * t_c / (t_c + 237.3))


def dew_point_c(e_kpa):
    """Inverse of es_kpa: the temperature at which e_kpa saturates, degC."""
    x = math.log(e_kpa / 0.6108)
    return 237.3 * x / (17.27 - x)


def cos_zenith(when, lat_deg, lon_deg, utc_offset_h):
    """Cosine of the solar zenith angle at local standard time `when` (may be negative)."""
    n = when.timetuple().tm_yday
    decl = math.radians(23.45) * math.sin(2 * math.pi * (284 + n) / 365)
    b = 2 * math.pi * (n - 81) / 364
    eot_min = 9.87 * math.sin(2 * b) - 7.53 * math.cos(b) - 1.5 * math.sin(b)
    clock_h = when.hour + when.minute / 60
    solar_h = clock_h + (4 * (lon_deg - 15 * utc_offset_h) + eot_min) / 60
    omega = math.radians(15 * (solar_h - 12))
    lat = math.radians(lat_deg)
    return math.sin(lat) * math.sin(decl) + math.cos(lat) * math.cos(decl) * math.cos(omega)


def clear_sky_w_m2(cz, doy):
    """Clear-sky shortwave on a horizontal surface, W m-2."""
    if cz <= 0:
        return 0.0
    e0 = 1 + 0.033 * math.cos(2 * math.pi * doy / 365)
    return S0 * e0 * cz * 0.76 ** (1 / max(cz, 0.05))


def fmt(x, nd=1):
    """Round for the file; '-0.0' would look odd."""
    s = f"{x:.{nd}f}"
    return "0." + "0" * nd if s == "-0." + "0" * nd else s


def savanna_year(rng):
    """Rows of the one-year hourly savanna file."""
    lat, lon, utc = -15.0, 28.0, 2
    start = datetime(2025, 1, 1)
    n_days = 365
    rows = []
    temp_anom = cloud_anom = dew_anom = 0.0
    rained_yesterday = False
    for d in range(n_days):
        day = start + timedelta(days=d)
        doy = d + 1
        # Wetness: 1 in mid-January (height of the rains), 0 in mid-July.
        wet = 0.5 + 0.5 * math.cos(2 * math.pi * (doy - 15) / 365)
        # Day-to-day weather as first-order autoregressive anomalies.
        temp_anom = 0.7 * temp_anom + rng.gauss(0, 0.9)
        cloud_anom = 0.5 * cloud_anom + rng.gauss(0, 0.12)
        dew_anom = 0.7 * dew_anom + rng.gauss(0, 1.0)
        p_rain = 0.03 + 0.6 * wet**2 + (0.2 * wet if rained_yesterday else 0.0)
        rain_day = rng.random() < p_rain
        rained_yesterday = rain_day
        # Daily clear-sky fraction that reaches the ground: cloudier in the rains and on rain days.
        transmit = 0.93 - 0.28 * wet - (0.15 if rain_day else 0.0) + cloud_anom
        transmit = min(1.0, max(0.2, transmit))
        # Cool dry season (July), hot before the rains (October), clouds damp the wet season.
        t_mean = (
            21.0
            - 3.5 * math.cos(2 * math.pi * (doy - 195) / 365)
            + 2.5 * math.exp(-(((doy - 285) / 35) ** 2))
            - 1.5 * wet
            + temp_anom
        )
        dtr = 8.0 + 9.0 * (transmit - 0.2) / 0.8 - 3.0 * wet  # diurnal temperature range
        td_mean = 4.0 + 13.0 * wet + dew_anom
        rain_start = rng.randint(13, 19)
        rain_hours = rng.randint(1, 4)
        for h in range(24):
            when = day + timedelta(hours=h)
            mid = when + timedelta(minutes=30)
            cz = cos_zenith(mid, lat, lon, utc)
            sw = clear_sky_w_m2(cz, doy) * transmit * (1 + rng.gauss(0, 0.08))
            if cz <= 0:
                sw = rng.choice([0.0, 0.0, -0.4, -1.1])  # night sensor offsets
            t = t_mean + dtr / 2 * math.cos(2 * math.pi * (h + 0.5 - 15) / 24) + rng.gauss(0, 0.3)
            td = min(td_mean + rng.gauss(0, 0.4), t - 0.1)
            rh = min(100.0, 100 * es_kpa(td) / es_kpa(t))
            precip = 0.0
            if rain_day and rain_start <= h < rain_start + rain_hours:
                precip = rng.expovariate(1 / (2.0 + 6.0 * wet))
                rh = min(100.0, rh + 15)
            wind = max(0.2, 1.4 + 1.6 * max(cz, 0) + 0.8 * (1 - wet) + rng.gauss(0, 0.5))
            rows.append(
                [
                    when.strftime("%Y-%m-%dT%H:%M"),
                    fmt(t),
                    fmt(rh),
                    fmt(max(sw, -1.1)),
                    fmt(precip),
                    fmt(wind),
                ]
            )
    # Short gaps: one or two empty hours in one variable, at fixed places.
    for row_idx, col, length in [(1000, 1, 1), (2500, 2, 2), (4100, 3, 1), (5200, 1, 2), (7000, 2, 1)]:
        for k in range(length):
            rows[row_idx + k][col] = ""
    # One long gap: 6 hours with every variable missing (a logger outage).
    for k in range(6):
        for col in range(1, 6):
            rows[6000 + k][col] = ""
    return ["time", "t_air_c", "rh_percent", "sw_w_m2", "precip_mm", "wind_m_s"], rows


def tower_six_weeks(rng):
    """Rows of the half-hourly flux-tower-style file."""
    lat, lon, utc, elevation = 47.0, 11.0, 1, 900.0
    start = datetime(2025, 6, 1)
    steps = 42 * 48
    pa_base = 101.3 * ((293 - 0.0065 * elevation) / 293) ** 5.26  # FAO-56 eq. 7
    rows = []
    temp_anom = cloud = 0.0
    for i in range(steps):
        when = start + timedelta(minutes=30 * i)
        if i % 48 == 0:
            temp_anom = 0.7 * temp_anom + rng.gauss(0, 1.2)
            cloud = min(1.0, max(0.25, 0.75 + rng.gauss(0, 0.2)))
            rain_day = rng.random() < 0.35
        doy = when.timetuple().tm_yday
        cz = cos_zenith(when + timedelta(minutes=15), lat, lon, utc)
        sw = clear_sky_w_m2(cz, doy) * cloud * (1 + rng.gauss(0, 0.1)) if cz > 0 else rng.uniform(-3, 0)
        h = when.hour + when.minute / 60
        t = 15.0 + 0.05 * (i / 48) + temp_anom + 5.0 * cloud * math.cos(2 * math.pi * (h - 15) / 24)
        rh = min(98.0, max(25.0, 70 - 25 * cloud * math.cos(2 * math.pi * (h - 15) / 24) + rng.gauss(0, 3)))
        vpd_hpa = 10 * es_kpa(t) * (1 - rh / 100)
        precip = rng.expovariate(1 / 1.5) if rain_day and 15 <= h < 18 else 0.0
        pa = pa_base + 0.4 * math.sin(2 * math.pi * i / (48 * 5)) + rng.gauss(0, 0.02)
        ws = max(0.1, 2.0 + 1.0 * max(cz, 0) + rng.gauss(0, 0.6))
        end = when + timedelta(minutes=30)
        rows.append(
            [
                when.strftime("%Y%m%d%H%M"),
                end.strftime("%Y%m%d%H%M"),
                fmt(t, 2),
                fmt(vpd_hpa, 3),
                fmt(sw, 2),
                fmt(pa, 2),
                fmt(precip, 2),
                fmt(ws, 2),
            ]
        )
    # A few single missing values (-9999), away from the file's ends so they can be filled.
    for row_idx, col in [(100, 2), (777, 3), (1300, 4), (1500, 2), (1501, 3), (1900, 7)]:
        rows[row_idx][col] = "-9999"
    header = ["TIMESTAMP_START", "TIMESTAMP_END", "TA_F", "VPD_F", "SW_IN_F", "PA_F", "P_F", "WS_F"]
    return header, rows


def write(path, header, rows):
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "w", newline="\n") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(r) + "\n")


def main():
    rng = random.Random(SEED)
    write(os.path.join(HERE, "weather.csv"), *savanna_year(rng))
    write(os.path.join(HERE, "tower", "halfhourly.csv"), *tower_six_weeks(rng))


if __name__ == "__main__":
    main()
