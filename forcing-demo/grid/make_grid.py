"""Invented gridded weather for the `isodisc grid` demo and checks (seeded; numpy + netCDF4).

Writes, next to this script:
  forcing_2001a.nc, forcing_2001b.nc  NetCDF classic, January-June and July-December 2001, joined
                                      along time by the grid file; float32, 3-hourly, 8 x 10 cells
  forcing_2001_packed.nc              the same year in one file, each variable packed as int16 with
                                      scale_factor/add_offset and a _FillValue (CF packing)
  forcing_2001_nc4.nc                 January-February 2001 as NetCDF-4/HDF5: the same float32 values,
                                      deflate-compressed with the shuffle filter, in chunks that do not
                                      divide the grid (the check that both formats give the same run)
  cover.nc                            C3 and C4 cover fractions (0-1) on the same grid; the western
                                      columns are sea (no vegetation)

Usage: python3 forcing-demo/grid/make_grid.py   (numbers are invented, not observations)

For the speed measurement (not committed): python3 forcing-demo/grid/make_grid.py --bench DIR
writes DIR/forcing.nc (100 x 100 cells, all land, 64-bit offset), DIR/cover.nc and DIR/grid.toml;
--bench-nc4 DIR (after --bench DIR) adds DIR/forcing_nc4.nc, the same values as NetCDF-4
(deflate level 4, shuffle, netCDF4-python's default chunks), and DIR/grid_nc4.toml.
"""
import os
import sys

import numpy as np
import netCDF4

HERE = os.path.dirname(os.path.abspath(__file__))
NLAT, NLON = 8, 10
LAT = 35.25 + 0.5 * np.arange(NLAT)
LON = 0.25 + 0.5 * np.arange(NLON)
STEP_H = 3
HOURS = np.arange(0, 365 * 24, STEP_H, dtype=np.float64)  # hours since 2001-01-01 00:00 UTC

VARS = {
    # name: (units, standard_name, long_name)
    "tas": ("K", "air_temperature", "near-surface air temperature"),
    "huss": ("kg kg-1", "specific_humidity", "near-surface specific humidity"),
    "rsds": ("W m-2", "surface_downwelling_shortwave_flux_in_air", "shortwave, mean over the step"),
    "pr": ("kg m-2 s-1", "precipitation_flux", "precipitation rate, mean over the step"),
    "ps": ("Pa", "surface_air_pressure", "surface air pressure"),
}


def weather(rng, lat_values=LAT, lon_values=LON):
    nlat, nlon = len(lat_values), len(lon_values)
    t = HOURS[:, None, None]
    day = t / 24.0
    lat = lat_values[None, :, None]
    lon = lon_values[None, None, :]
    season = -np.cos(2 * np.pi * (day - 15) / 365.0)
    solar_hour = (t % 24) + lon / 15.0 + STEP_H / 2.0
    # Clear-sky shortwave from the sun's elevation at mid-step (simple declination formula).
    decl = np.radians(23.44) * np.sin(2 * np.pi * (day - 80) / 365.0)
    ha = np.radians(15.0 * (solar_hour - 12.0))
    sin_el = np.sin(np.radians(lat)) * np.sin(decl) + np.cos(np.radians(lat)) * np.cos(decl) * np.cos(ha)
    cloud = np.clip(0.75 + 0.2 * rng.standard_normal((len(HOURS) // 8, nlat, nlon)), 0.2, 1.0)
    cloud = np.repeat(cloud, 8, axis=0)
    rsds = np.clip(1000.0 * sin_el, 0.0, None) * cloud
    diurnal = np.cos(2 * np.pi * (solar_hour - 15.0) / 24.0)
    tas = 273.15 + 16.0 - 1.2 * (lat - 35.0) + 8.0 * season + 5.0 * diurnal + 1.5 * rng.standard_normal(rsds.shape)
    # Relative humidity 40-85 %, drier in summer; specific humidity from it (Tetens, FAO-56).
    tc = tas - 273.15
    es = 0.6108 * np.exp(17.27 * tc / (tc + 237.3))
    rh = np.clip(0.65 - 0.2 * season - 0.1 * diurnal, 0.2, 0.95)
    ps = 101325.0 - 12.0 * (lon * 40.0) + 300.0 * rng.standard_normal(rsds.shape)
    e = rh * es
    p_kpa = ps / 1000.0
    huss = 0.622 * e / (p_kpa - 0.378 * e)
    wet = rng.random(rsds.shape) < (0.06 - 0.03 * season)
    pr = np.where(wet, rng.exponential(1.0, rsds.shape), 0.0) / 3600.0  # kg m-2 s-1
    return {"tas": tas, "huss": huss, "rsds": rsds, "pr": pr, "ps": ps}


def write(path, fields, steps, fmt, rows=slice(None), packed=False, compress=False):
    ds = netCDF4.Dataset(path, "w", format=fmt)
    ds.Conventions = "CF-1.8"
    ds.title = "Invented 3-hourly weather for the isodisc grid demo"
    ds.createDimension("time", None)
    ds.createDimension("lat", len(LAT[rows]))
    ds.createDimension("lon", NLON)
    t = ds.createVariable("time", "f8", ("time",))
    t.units = "hours since 2001-01-01 00:00:00"
    t.calendar = "standard"
    t.standard_name = "time"
    t[:] = HOURS[steps]
    for name, values, units in (("lat", LAT[rows], "degrees_north"), ("lon", LON, "degrees_east")):
        v = ds.createVariable(name, "f8", (name,))
        v.units = units
        v[:] = values
    for name, (units, std, long_name) in VARS.items():
        data = fields[name][steps][:, rows, :]
        if packed:
            lo, hi = float(data.min()), float(data.max())
            scale = (hi - lo) / 60000.0 if hi > lo else 1.0
            offset = (hi + lo) / 2.0
            v = ds.createVariable(name, "i2", ("time", "lat", "lon"), fill_value=np.int16(-32767))
            v.scale_factor = scale
            v.add_offset = offset
            v.set_auto_maskandscale(True)
        elif compress:
            v = ds.createVariable(name, "f4", ("time", "lat", "lon"), fill_value=np.float32(1e20),
                                  zlib=True, complevel=4, shuffle=True, chunksizes=(100, 3, 4))
        else:
            v = ds.createVariable(name, "f4", ("time", "lat", "lon"), fill_value=np.float32(1e20))
        v.units = units
        v.standard_name = std
        v.long_name = long_name
        v[:] = data
    ds.close()


def main():
    rng = np.random.default_rng(20011)
    fields = weather(rng)
    half = 4344 // STEP_H  # 1 July 2001 00:00 is hour 4344
    assert HOURS[half] == 4344.0
    classic = "NETCDF3_CLASSIC"
    write(os.path.join(HERE, "forcing_2001a.nc"), fields, slice(0, half), classic)
    write(os.path.join(HERE, "forcing_2001b.nc"), fields, slice(half, None), classic)
    write(os.path.join(HERE, "forcing_2001_packed.nc"), fields, slice(None), classic, packed=True)
    march = (31 + 28) * 24 // STEP_H  # 1 March 2001 00:00
    write(os.path.join(HERE, "forcing_2001_nc4.nc"), fields, slice(0, march), "NETCDF4", compress=True)

    # Cover: sea in the two western columns and one bay cell; C4 grass more common to the south.
    ds = netCDF4.Dataset(os.path.join(HERE, "cover.nc"), "w", format=classic)
    ds.Conventions = "CF-1.8"
    ds.title = "Invented C3 and C4 cover fractions for the isodisc grid demo"
    ds.createDimension("lat", NLAT)
    ds.createDimension("lon", NLON)
    for name, values, units in (("lat", LAT, "degrees_north"), ("lon", LON, "degrees_east")):
        v = ds.createVariable(name, "f8", (name,))
        v.units = units
        v[:] = values
    land = np.ones((NLAT, NLON), dtype=bool)
    land[:, :2] = False
    land[3, 2] = False
    c4 = np.clip(0.6 - 0.15 * (LAT[:, None] - 35.25) + 0.0 * LON[None, :], 0.0, 0.6)
    c3 = np.clip(0.9 - c4, 0.0, 1.0)
    for name, frac in (("cover_c3", c3), ("cover_c4", c4)):
        v = ds.createVariable(name, "f4", ("lat", "lon"), fill_value=np.float32(1e20))
        v.units = "1"
        v.long_name = f"fraction of the ground covered by {name[-2:].upper()} vegetation"
        v[:] = np.where(land, frac, 0.0)
    ds.close()


def bench(out):
    """A 100 x 100 grid at 0.5 degrees, every cell land, written ten latitude rows at a time."""
    os.makedirs(out, exist_ok=True)
    nlat, nlon = 100, 100
    lat = 20.25 + 0.5 * np.arange(nlat)
    lon = -10.25 + 0.5 * np.arange(nlon)
    rng = np.random.default_rng(7)
    ds = netCDF4.Dataset(os.path.join(out, "forcing.nc"), "w", format="NETCDF3_64BIT_OFFSET")
    ds.createDimension("time", len(HOURS))
    ds.createDimension("lat", nlat)
    ds.createDimension("lon", nlon)
    t = ds.createVariable("time", "f8", ("time",))
    t.units = "hours since 2001-01-01 00:00:00"
    t.calendar = "standard"
    t[:] = HOURS
    for name, values, units in (("lat", lat, "degrees_north"), ("lon", lon, "degrees_east")):
        v = ds.createVariable(name, "f8", (name,))
        v.units = units
        v[:] = values
    vs = {}
    for name, (units, std, long_name) in VARS.items():
        vs[name] = ds.createVariable(name, "f4", ("time", "lat", "lon"))
        vs[name].units = units
    for r in range(0, nlat, 10):
        fields = weather(rng, 10.0 + 0.5 * lat[r:r + 10], lon)
        for name in VARS:
            vs[name][:, r:r + 10, :] = fields[name].astype(np.float32)
    ds.close()
    ds = netCDF4.Dataset(os.path.join(out, "cover.nc"), "w", format="NETCDF3_CLASSIC")
    ds.createDimension("lat", nlat)
    ds.createDimension("lon", nlon)
    for name, values, units in (("lat", lat, "degrees_north"), ("lon", lon, "degrees_east")):
        v = ds.createVariable(name, "f8", (name,))
        v.units = units
        v[:] = values
    for name, frac in (("cover_c3", 0.6), ("cover_c4", 0.3)):
        v = ds.createVariable(name, "f4", ("lat", "lon"))
        v[:] = np.full((nlat, nlon), frac)
    ds.close()
    here = open(os.path.join(HERE, "grid.toml")).read()
    here = here.replace('files = ["forcing_2001a.nc", "forcing_2001b.nc"]', 'files = ["forcing.nc"]')
    open(os.path.join(out, "grid.toml"), "w").write(here)


def bench_nc4(out):
    """The --bench weather copied into NetCDF-4, compressed, ten latitude rows at a time."""
    src = netCDF4.Dataset(os.path.join(out, "forcing.nc"))
    ds = netCDF4.Dataset(os.path.join(out, "forcing_nc4.nc"), "w", format="NETCDF4")
    for name, dim in src.dimensions.items():
        ds.createDimension(name, None if name == "time" else len(dim))
    for name, v in src.variables.items():
        three = v.dimensions == ("time", "lat", "lon")
        w = ds.createVariable(name, v.dtype, v.dimensions, zlib=three, complevel=4, shuffle=three)
        w.setncatts({k: v.getncattr(k) for k in v.ncattrs()})
        if three:
            for r in range(0, v.shape[1], 10):
                w[:, r:r + 10, :] = v[:, r:r + 10, :]
        else:
            w[:] = v[:]
    ds.close()
    src.close()
    text = open(os.path.join(out, "grid.toml")).read()
    open(os.path.join(out, "grid_nc4.toml"), "w").write(text.replace('"forcing.nc"', '"forcing_nc4.nc"'))


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--bench":
        bench(sys.argv[2])
    elif len(sys.argv) == 3 and sys.argv[1] == "--bench-nc4":
        bench_nc4(sys.argv[2])
    else:
        main()
