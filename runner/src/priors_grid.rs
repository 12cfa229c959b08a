//! Gridded monthly land priors for atmospheric inversions (docs/priors.md): CF-1.8 NetCDF with
//! dimensions (time, lat, lon), time/lat/lon bounds, cell areas and a land mask, every field a
//! monthly mean (`cell_methods = "time: mean"`).
//!
//! The file is NetCDF classic with 64-bit offsets (CDF-2), written by the pure-Rust `netcdf3`
//! crate: NetCDF-4 (HDF5) compression and chunking are not available through it, so a global
//! 0.5° year of the standard fields is about 12 × 720 × 360 × 8 bytes ≈ 25 MB per variable.
//! Written atomically (temporary file beside the target, then rename).
//!
//! Fluxes are in kg C m⁻² s⁻¹ (CF unit string `kg m-2 s-1`): the unit of the CF standard names for
//! carbon fluxes (`gross_primary_productivity_of_biomass_expressed_as_carbon`, from memory), so
//! CF tools read them without a conversion; mol m⁻² s⁻¹ is this value ÷ 0.012011 kg mol⁻¹.

use std::path::Path;

use netcdf3::{DataSet, FileReader, FileWriter, NC_FILL_F64, Version};

use crate::ensemble::summary::stats;
use crate::error::{Context, Error, Result};
use crate::simulate::{PeriodRow, period_col};

/// Radius (m) of the sphere the cell areas are computed on: the authalic (equal-area) radius of
/// the GRS80 ellipsoid, 6,371,007.181 m (Moritz 2000, Geodetic Reference System 1980, from memory),
/// rounded to 0.1 m — the sphere whose area equals the ellipsoid's.
pub const EARTH_RADIUS_M: f64 = 6_371_007.2;

/// Seconds per day.
const SECONDS_PER_DAY: f64 = 86_400.0;

/// Seconds per year for annual totals: the Julian year of 365.25 days.
pub const SECONDS_PER_YEAR: f64 = 365.25 * SECONDS_PER_DAY;

/// Global attributes of a priors file.
#[derive(Debug, Clone, PartialEq)]
pub struct GridAttributes {
    /// `title`.
    pub title: String,
    /// `history`: the command line that made the file.
    pub history: String,
    /// `isodisc_version` (also in `source`).
    pub isodisc_version: String,
}

impl GridAttributes {
    /// Attributes with this build's version.
    pub fn new(title: &str, history: &str) -> Self {
        Self {
            title: title.to_string(),
            history: history.to_string(),
            isodisc_version: env!("CARGO_PKG_VERSION").to_string(),
        }
    }
}

/// Gridded monthly priors: a regular latitude × longitude grid, one slice per month.
#[derive(Debug, Clone, PartialEq)]
pub struct GridPriors {
    /// Cell-centre latitudes (degrees north), in file order.
    pub lat: Vec<f64>,
    /// Cell-centre longitudes (degrees east), in file order.
    pub lon: Vec<f64>,
    /// Southern and northern edge of each latitude row (degrees north).
    pub lat_bnds: Vec<[f64; 2]>,
    /// Western and eastern edge of each longitude column (degrees east; east > west).
    pub lon_bnds: Vec<[f64; 2]>,
    /// The months, (year, month 1–12), strictly increasing.
    pub month_starts: Vec<(i32, u32)>,
    /// 1 for a land cell that was run, 0 otherwise; [lat][lon] row-major.
    pub land_mask: Vec<u8>,
    /// The fields.
    pub fields: Vec<GridField>,
    /// Global attributes.
    pub attributes: GridAttributes,
}

/// One monthly field on the grid.
#[derive(Debug, Clone, PartialEq)]
pub struct GridField {
    /// Variable name (letters, digits and `_`, starting with a letter).
    pub name: String,
    /// UDUNITS string (`kg m-2 s-1`, `1e-3`, `1`).
    pub units: String,
    /// CF standard name, where the CF table has one.
    pub standard_name: Option<String>,
    /// Long name.
    pub long_name: String,
    /// Monthly means, [time][lat][lon] row-major; NaN where there is no value (written as
    /// `_FillValue`).
    pub values: Vec<f64>,
    /// Standard deviation over ensemble members, same layout (written as `NAME_sd`).
    pub sd: Option<Vec<f64>>,
}

use crate::forcing::time::{civil_from_days, days_from_civil};

/// The month after (year, month).
fn next_month((y, m): (i32, u32)) -> (i32, u32) {
    if m == 12 { (y + 1, 1) } else { (y, m + 1) }
}

/// Seconds in a calendar month (standard calendar).
pub fn month_seconds(month: (i32, u32)) -> f64 {
    let (a, b) = (month, next_month(month));
    (days_from_civil(b.0.into(), b.1, 1) - days_from_civil(a.0.into(), a.1, 1)) as f64
        * SECONDS_PER_DAY
}

/// (year, month) of a `YYYY-MM` label; None when it is not one.
pub fn parse_month(label: &str) -> Option<(i32, u32)> {
    let (y, m) = label.split_once('-')?;
    let (y, m): (i32, u32) = (y.parse().ok()?, m.parse().ok()?);
    (1..=12).contains(&m).then_some((y, m))
}

/// Area (m²) of each cell, [lat][lon] row-major, on a sphere of radius [`EARTH_RADIUS_M`]:
/// R²·Δλ·(sin φ₂ − sin φ₁) with Δλ in radians (the area of a latitude-longitude rectangle on a
/// sphere; common practice).
pub fn cell_areas_m2(lat_bnds: &[[f64; 2]], lon_bnds: &[[f64; 2]]) -> Vec<f64> {
    let r2 = EARTH_RADIUS_M * EARTH_RADIUS_M;
    let mut out = Vec::with_capacity(lat_bnds.len() * lon_bnds.len());
    for [s, n] in lat_bnds {
        let band = n.to_radians().sin() - s.to_radians().sin();
        for [w, e] in lon_bnds {
            out.push(r2 * (e - w).to_radians() * band);
        }
    }
    out
}

/// Names the writer uses for the coordinates and their companions.
const RESERVED: [&str; 9] = [
    "time",
    "time_bnds",
    "lat",
    "lat_bnds",
    "lon",
    "lon_bnds",
    "nv",
    "cell_area",
    "land_mask",
];

fn valid_name(name: &str) -> bool {
    let mut c = name.chars();
    c.next().is_some_and(|f| f.is_ascii_alphabetic())
        && c.all(|x| x.is_ascii_alphanumeric() || x == '_')
}

impl GridPriors {
    /// Number of cells of one month.
    pub fn n_cells(&self) -> usize {
        self.lat.len() * self.lon.len()
    }

    /// The field called `name`.
    pub fn field(&self, name: &str) -> Option<&GridField> {
        self.fields.iter().find(|f| f.name == name)
    }

    /// Cell areas (m²), see [`cell_areas_m2`].
    pub fn cell_areas_m2(&self) -> Vec<f64> {
        cell_areas_m2(&self.lat_bnds, &self.lon_bnds)
    }

    /// Checks the shapes, coordinates, months and names; the error names the item, its index and
    /// value.
    pub fn validate(&self) -> Result<()> {
        let bad = |m: String| Err(Error::msg(format!("gridded priors: {m}")));
        let (ny, nx, nt) = (self.lat.len(), self.lon.len(), self.month_starts.len());
        if ny == 0 || nx == 0 || nt == 0 {
            return bad(format!(
                "{ny} latitudes, {nx} longitudes and {nt} months: NetCDF classic needs at least \
                 one of each"
            ));
        }
        if self.lat_bnds.len() != ny || self.lon_bnds.len() != nx {
            return bad(format!(
                "{} lat_bnds for {ny} latitudes, {} lon_bnds for {nx} longitudes",
                self.lat_bnds.len(),
                self.lon_bnds.len()
            ));
        }
        for (i, (c, [s, n])) in self.lat.iter().zip(&self.lat_bnds).enumerate() {
            if !(-90.0..=90.0).contains(s) || !(-90.0..=90.0).contains(n) || s >= n {
                return bad(format!(
                    "lat_bnds[{i}] = [{s}, {n}]: needs south < north within [-90, 90]"
                ));
            }
            if !(*s..=*n).contains(c) {
                return bad(format!("lat[{i}] = {c} lies outside its bounds [{s}, {n}]"));
            }
        }
        for (i, (c, [w, e])) in self.lon.iter().zip(&self.lon_bnds).enumerate() {
            if !w.is_finite() || !e.is_finite() || w >= e || e - w > 360.0 {
                return bad(format!(
                    "lon_bnds[{i}] = [{w}, {e}]: needs west < east, at most 360 degrees apart"
                ));
            }
            if !(*w..=*e).contains(c) {
                return bad(format!("lon[{i}] = {c} lies outside its bounds [{w}, {e}]"));
            }
        }
        for (i, &(y, m)) in self.month_starts.iter().enumerate() {
            if !(1..=12).contains(&m) || !(1..=9999).contains(&y) {
                return bad(format!("month_starts[{i}] = ({y}, {m}) is not a month"));
            }
            if i > 0 && self.month_starts[i - 1] >= (y, m) {
                return bad(format!(
                    "month_starts[{i}] = {y:04}-{m:02} does not follow {:04}-{:02}",
                    self.month_starts[i - 1].0,
                    self.month_starts[i - 1].1
                ));
            }
        }
        if self.land_mask.len() != ny * nx {
            return bad(format!(
                "land_mask has {} values for {ny} x {nx} cells",
                self.land_mask.len()
            ));
        }
        if let Some((i, v)) = self.land_mask.iter().enumerate().find(|(_, v)| **v > 1) {
            return bad(format!("land_mask[{i}] = {v}: must be 0 or 1"));
        }
        let want = nt * ny * nx;
        let mut names: Vec<&str> = Vec::new();
        for f in &self.fields {
            let sd_name = format!("{}_sd", f.name);
            if !valid_name(&f.name) || RESERVED.contains(&f.name.as_str()) {
                return bad(format!(
                    "field name `{}`: use letters, digits and _, starting with a letter, and none \
                     of {}",
                    f.name,
                    RESERVED.join(", ")
                ));
            }
            if names.contains(&f.name.as_str()) || names.contains(&sd_name.as_str()) {
                return bad(format!("field `{}` is given twice", f.name));
            }
            names.push(&f.name);
            for (what, v) in [("values", Some(&f.values)), ("sd", f.sd.as_ref())] {
                if let Some(v) = v
                    && v.len() != want
                {
                    return bad(format!(
                        "field `{}`: {} {what} for {nt} months x {ny} x {nx} cells",
                        f.name,
                        v.len()
                    ));
                }
            }
        }
        for f in &self.fields {
            let sd_name = format!("{}_sd", f.name);
            if f.sd.is_some() && names.contains(&sd_name.as_str()) {
                return bad(format!(
                    "field `{sd_name}` clashes with the sd of `{}`",
                    f.name
                ));
            }
        }
        Ok(())
    }
}

/// Defines the monthly `time` coordinate (mid-month, in days since 1 January of `y0`, standard
/// calendar; `long_name` says on whose clock) and its `time_bnds` (the month's start and end).
pub(crate) fn define_month_time(
    ds: &mut DataSet,
    path: &Path,
    y0: i32,
    long_name: &str,
) -> Result<()> {
    let def = |e| nc_err(path, "definition", e);
    let time_units = format!("days since {y0:04}-01-01 00:00:00");
    ds.add_var_f64("time", &["time"]).map_err(def)?;
    for (k, v) in [
        ("standard_name", "time"),
        ("long_name", long_name),
        ("units", time_units.as_str()),
        ("calendar", "standard"),
        ("axis", "T"),
        ("bounds", "time_bnds"),
    ] {
        ds.add_var_attr_string("time", k, v).map_err(def)?;
    }
    ds.add_var_f64("time_bnds", &["time", "nv"]).map_err(def)?;
    ds.add_var_attr_string("time_bnds", "long_name", "start and end of the month")
        .map_err(def)?;
    Ok(())
}

/// A netcdf3 error on `path` while doing `what`.
pub(crate) fn nc_err(path: &Path, what: &str, e: impl std::fmt::Debug) -> Error {
    // netcdf3's errors have no Display: show their Debug form.
    Error::msg(format!("{}: NetCDF {what}: {e:?}", path.display()))
}

/// Writes the NetCDF data set `ds` to `path` atomically: `fill` writes the variables into a
/// temporary file beside `path`, which is renamed onto `path` once closed; on any error it is
/// removed and `path` is left as it was.
pub fn write_nc_atomic(
    path: &Path,
    ds: &DataSet,
    version: Version,
    fill: impl FnOnce(&mut FileWriter) -> Result<()>,
) -> Result<()> {
    let tmp = crate::output::sibling(path, "tmp");
    crate::output::clean_stale(path);
    crate::output::track_temp(&tmp);
    let result = (|| -> Result<()> {
        let w = |e| nc_err(path, "write", e);
        let mut fw = FileWriter::open(&tmp).map_err(w)?;
        fw.set_def(ds, version, 0).map_err(w)?;
        fill(&mut fw)?;
        fw.close().map_err(w)?;
        std::fs::rename(&tmp, path)
            .with_context(|| format!("cannot move the result into {}", path.display()))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    crate::output::untrack(&tmp);
    result
}

/// NaN as the fill value.
pub fn filled(v: &[f64]) -> Vec<f64> {
    v.iter()
        .map(|x| if x.is_nan() { NC_FILL_F64 } else { *x })
        .collect()
}

/// The time axis of `months`: the first month's year Y0 (the axis counts days since Y0-01-01),
/// each month's middle and its bounds (start, end) flattened.
pub fn time_axis(months: &[(i32, u32)]) -> (i32, Vec<f64>, Vec<f64>) {
    let y0 = months.first().map_or(1970, |m| m.0);
    let origin = days_from_civil(y0.into(), 1, 1);
    let day = |(y, m): (i32, u32)| (days_from_civil(y.into(), m, 1) - origin) as f64;
    let mut mid = Vec::with_capacity(months.len());
    let mut bnds = Vec::with_capacity(2 * months.len());
    for &m in months {
        let (a, b) = (day(m), day(next_month(m)));
        mid.push(0.5 * (a + b));
        bnds.extend([a, b]);
    }
    (y0, mid, bnds)
}

/// The (year, month) of each month's start in a flattened `time_bnds` whose time `units` are
/// "days since YYYY-01-01 ..." (as [`time_axis`] writes them); the error names the file.
pub fn months_of_time_bnds(path: &Path, units: &str, bnds: &[f64]) -> Result<Vec<(i32, u32)>> {
    let y0: i64 = units
        .strip_prefix("days since ")
        .and_then(|s| s.get(..4))
        .and_then(|y| y.parse().ok())
        .ok_or_else(|| {
            Error::msg(format!(
                "{}: time units `{units}` are not `days since YYYY-01-01 ...`",
                path.display()
            ))
        })?;
    let origin = days_from_civil(y0, 1, 1);
    Ok(bnds
        .chunks(2)
        .map(|b| {
            let (y, m, _) = civil_from_days(origin + b[0] as i64);
            (y as i32, m)
        })
        .collect())
}

/// Writes gridded priors as CF-1.8 NetCDF (classic format with 64-bit offsets), atomically.
/// Fails, before anything is written, when [`GridPriors::validate`] does.
pub fn write_priors_grid(path: &Path, p: &GridPriors) -> Result<()> {
    p.validate()
        .with_context(|| format!("cannot write {}", path.display()))?;
    let (ny, nx, nt) = (p.lat.len(), p.lon.len(), p.month_starts.len());
    let (y0, time, time_bnds) = time_axis(&p.month_starts);
    let mut ds = DataSet::new();
    let def = |e| nc_err(path, "definition", e);
    for (d, n) in [("time", nt), ("lat", ny), ("lon", nx), ("nv", 2)] {
        ds.add_fixed_dim(d, n).map_err(def)?;
    }
    let attrs = |ds: &mut DataSet, var: &str, list: &[(&str, &str)]| -> Result<()> {
        for (k, v) in list {
            ds.add_var_attr_string(var, k, v).map_err(def)?;
        }
        Ok(())
    };
    define_month_time(&mut ds, path, y0, "middle of the month")?;
    for (v, n, units, std, axis, long) in [
        (
            "lat",
            "lat",
            "degrees_north",
            "latitude",
            "Y",
            "latitude of the cell centre",
        ),
        (
            "lon",
            "lon",
            "degrees_east",
            "longitude",
            "X",
            "longitude of the cell centre",
        ),
    ] {
        let b = format!("{v}_bnds");
        ds.add_var_f64(v, &[n]).map_err(def)?;
        attrs(
            &mut ds,
            v,
            &[
                ("standard_name", std),
                ("long_name", long),
                ("units", units),
                ("axis", axis),
                ("bounds", &b),
            ],
        )?;
        ds.add_var_f64(&b, &[n, "nv"]).map_err(def)?;
        attrs(
            &mut ds,
            &b,
            &[("long_name", &format!("edges of the {v} cells"))],
        )?;
    }
    ds.add_var_f64("cell_area", &["lat", "lon"]).map_err(def)?;
    let area_comment = format!(
        "R^2 * dlon * (sin(lat_north) - sin(lat_south)) on a sphere of radius R = {EARTH_RADIUS_M} m \
         (authalic radius of GRS80)"
    );
    attrs(
        &mut ds,
        "cell_area",
        &[
            ("standard_name", "cell_area"),
            ("long_name", "area of the grid cell"),
            ("units", "m2"),
            ("comment", &area_comment),
        ],
    )?;
    ds.add_var_i8("land_mask", &["lat", "lon"]).map_err(def)?;
    attrs(
        &mut ds,
        "land_mask",
        &[
            ("standard_name", "land_binary_mask"),
            ("long_name", "1 where a land cell was run, 0 elsewhere"),
            ("units", "1"),
        ],
    )?;
    // No flag_values: the standard name says it (1 where land, 0 elsewhere), and netcdf3 0.6 pads
    // a byte attribute with fill bytes that its own reader then refuses.
    for f in &p.fields {
        let sd_name = format!("{}_sd", f.name);
        let mut vars = vec![(f.name.clone(), f.long_name.clone(), true)];
        if f.sd.is_some() {
            vars.push((
                sd_name.clone(),
                format!("{}, standard deviation over ensemble members", f.long_name),
                false,
            ));
        }
        for (var, long, is_mean) in vars {
            ds.add_var_f64(&var, &["time", "lat", "lon"]).map_err(def)?;
            let mut list = vec![
                ("long_name", long.as_str()),
                ("units", f.units.as_str()),
                ("cell_methods", "time: mean"),
                ("cell_measures", "area: cell_area"),
            ];
            if is_mean {
                if let Some(s) = &f.standard_name {
                    list.push(("standard_name", s));
                }
                if f.sd.is_some() {
                    list.push(("ancillary_variables", &sd_name));
                }
            }
            attrs(&mut ds, &var, &list)?;
            ds.add_var_attr_f64(&var, "_FillValue", vec![NC_FILL_F64])
                .map_err(def)?;
        }
    }
    let a = &p.attributes;
    let source = format!(
        "isodisc {} (site model with carbon/13C pools, run per land cell)",
        a.isodisc_version
    );
    for (k, v) in [
        ("Conventions", "CF-1.8"),
        ("title", a.title.as_str()),
        ("history", a.history.as_str()),
        ("source", source.as_str()),
        ("isodisc_version", a.isodisc_version.as_str()),
        (
            "comment",
            "monthly means of the months' steps; fluxes in kg C m-2 s-1 (divide by 0.012011 kg \
             mol-1 for mol m-2 s-1); isofluxes in permil kg C m-2 s-1",
        ),
    ] {
        ds.add_global_attr_string(k, v).map_err(def)?;
    }

    write_nc_atomic(path, &ds, Version::Offset64Bit, |fw| {
        let w = |e| nc_err(path, "write", e);
        fw.write_var_f64("time", &time).map_err(w)?;
        fw.write_var_f64("time_bnds", &time_bnds).map_err(w)?;
        fw.write_var_f64("lat", &p.lat).map_err(w)?;
        fw.write_var_f64("lon", &p.lon).map_err(w)?;
        let flat = |b: &[[f64; 2]]| b.iter().flatten().copied().collect::<Vec<f64>>();
        fw.write_var_f64("lat_bnds", &flat(&p.lat_bnds))
            .map_err(w)?;
        fw.write_var_f64("lon_bnds", &flat(&p.lon_bnds))
            .map_err(w)?;
        fw.write_var_f64("cell_area", &p.cell_areas_m2())
            .map_err(w)?;
        let mask: Vec<i8> = p.land_mask.iter().map(|&m| m as i8).collect();
        fw.write_var_i8("land_mask", &mask).map_err(w)?;
        for f in &p.fields {
            fw.write_var_f64(&f.name, &filled(&f.values)).map_err(w)?;
            if let Some(sd) = &f.sd {
                fw.write_var_f64(&format!("{}_sd", f.name), &filled(sd))
                    .map_err(w)?;
            }
        }
        Ok(())
    })
}

/// Reads a file written by [`write_priors_grid`] back (fill values as NaN): every variable over
/// (time, lat, lon) becomes a field, `NAME_sd` its sd.
pub fn read_priors_grid(path: &Path) -> Result<GridPriors> {
    let r = |e| nc_err(path, "read", e);
    let mut fr = FileReader::open(path).map_err(r)?;
    let (time_units, field_meta, attributes) = {
        let ds = fr.data_set();
        let time_units = ds
            .get_var_attr_as_string("time", "units")
            .unwrap_or_default();
        let mut meta = Vec::new();
        for v in ds.get_vars() {
            let name = v.name().to_string();
            if v.dim_names() != ["time", "lat", "lon"] || name.ends_with("_sd") {
                continue;
            }
            let s = |a: &str| v.get_attr_as_string(a);
            let has_sd = ds.has_var(&format!("{name}_sd"));
            meta.push((
                name,
                s("units").unwrap_or_default(),
                s("standard_name"),
                s("long_name").unwrap_or_default(),
                has_sd,
            ));
        }
        let g = |k: &str| ds.get_global_attr_as_string(k).unwrap_or_default();
        let attributes = GridAttributes {
            title: g("title"),
            history: g("history"),
            isodisc_version: g("isodisc_version"),
        };
        (time_units, meta, attributes)
    };
    let mut f64_var = |n: &str| -> Result<Vec<f64>> {
        let v =
            fr.read_var(n).map_err(r)?.get_f64_into().map_err(|_| {
                Error::msg(format!("{}: variable {n} is not double", path.display()))
            })?;
        Ok(v.into_iter()
            .map(|x| if x == NC_FILL_F64 { f64::NAN } else { x })
            .collect())
    };
    let pairs = |v: Vec<f64>| -> Vec<[f64; 2]> { v.chunks(2).map(|c| [c[0], c[1]]).collect() };
    let lat = f64_var("lat")?;
    let lon = f64_var("lon")?;
    let lat_bnds = pairs(f64_var("lat_bnds")?);
    let lon_bnds = pairs(f64_var("lon_bnds")?);
    let month_starts = months_of_time_bnds(path, &time_units, &f64_var("time_bnds")?)?;
    let mut fields = Vec::new();
    for (name, units, standard_name, long_name, has_sd) in field_meta {
        let values = f64_var(&name)?;
        let sd = if has_sd {
            Some(f64_var(&format!("{name}_sd"))?)
        } else {
            None
        };
        fields.push(GridField {
            name,
            units,
            standard_name,
            long_name,
            values,
            sd,
        });
    }
    let land_mask = fr
        .read_var("land_mask")
        .map_err(r)?
        .get_i8_into()
        .map_err(|_| Error::msg(format!("{}: land_mask is not a byte", path.display())))?
        .into_iter()
        .map(|m| m as u8)
        .collect();
    Ok(GridPriors {
        lat,
        lon,
        lat_bnds,
        lon_bnds,
        month_starts,
        land_mask,
        fields,
        attributes,
    })
}

// ---------------------------------------------------------------------------------------------
// The standard fields from monthly aggregates of runs.

/// One month of one run (one ensemble member) at one cell or site, as the simulation's monthly
/// aggregates hold it: sums in g C m⁻² over the month, flux-weighted means in ‰.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MonthAggregate {
    /// GPP summed over the month (g C m⁻²).
    pub gpp_g_m2: f64,
    /// C4 GPP summed over the month (g C m⁻²).
    pub gpp_c4_g_m2: f64,
    /// GPP-weighted ecosystem discrimination Δ (‰).
    pub discrimination_permil: f64,
    /// GPP-weighted Δ of the C3 part (‰).
    pub discrimination_c3_permil: f64,
    /// GPP-weighted Δ of the C4 part (‰).
    pub discrimination_c4_permil: f64,
    /// GPP-weighted δ13C of the assimilate (‰ VPDB).
    pub d13c_assimilate_permil: f64,
    /// Ecosystem respiration summed over the month (g C m⁻²).
    pub reco_g_m2: f64,
    /// Respiration-weighted δ13C of ecosystem respiration (‰ VPDB).
    pub d13c_respiration_permil: f64,
    /// Disequilibrium δR − δ13C of the assimilate (‰).
    pub disequilibrium_permil: f64,
    /// False when the run lacks steps of the month (its first or last month): a mean flux over
    /// the month is then unknown and every field of the month is left without a value.
    pub complete: bool,
}

impl MonthAggregate {
    /// From a monthly row of [`crate::simulate::simulate`].
    pub fn from_period_row(row: &PeriodRow) -> Self {
        let v = |n: &str| row.values[period_col(n)];
        Self {
            gpp_g_m2: v("gpp"),
            gpp_c4_g_m2: v("gpp_c4"),
            discrimination_permil: v("discrimination"),
            discrimination_c3_permil: v("discrimination_c3"),
            discrimination_c4_permil: v("discrimination_c4"),
            d13c_assimilate_permil: v("d13c_assimilate"),
            reco_g_m2: v("reco"),
            d13c_respiration_permil: v("d13c_respiration"),
            disequilibrium_permil: v("disequilibrium"),
            complete: v("complete") == 1.0,
        }
    }

    /// From a member's monthly values in the order of [`crate::ensemble::KEPT`]. These carry no
    /// completeness flag: the month counts as complete. The C4 GPP is c4_share × GPP (0 without
    /// GPP) and the assimilate's δ13C is δR − disequilibrium.
    pub fn from_kept(values: &[f64]) -> Self {
        use crate::ensemble::kept_col;
        let v = |n: &str| values[kept_col(n)];
        let gpp = v("gpp");
        let d13c_r = v("d13c_respiration");
        let diseq = v("disequilibrium");
        Self {
            gpp_g_m2: gpp,
            gpp_c4_g_m2: if gpp > 0.0 { v("c4_share") * gpp } else { 0.0 },
            discrimination_permil: v("discrimination"),
            discrimination_c3_permil: v("discrimination_c3"),
            discrimination_c4_permil: v("discrimination_c4"),
            d13c_assimilate_permil: d13c_r - diseq,
            reco_g_m2: v("reco"),
            d13c_respiration_permil: d13c_r,
            disequilibrium_permil: diseq,
            complete: true,
        }
    }
}

/// A standard field: name, UDUNITS units, CF standard name (where one exists), long name (without
/// units: they are in `units`).
pub type FieldSpec = (
    &'static str,
    &'static str,
    Option<&'static str>,
    &'static str,
);

/// Unit of the carbon fluxes: kg C m⁻² s⁻¹ (the carbon is named by the standard and long names).
pub const FLUX_UNITS: &str = "kg m-2 s-1";

/// The standard fields, in the order of [`month_values`]. Standard names from the CF standard
/// name table, from memory: GPP has one; ecosystem respiration (autotrophic + heterotrophic) has
/// none, and the net-flux names describe a downward flux of all land processes, not this NEE.
pub const STANDARD_FIELDS: [FieldSpec; 12] = [
    (
        "gpp",
        FLUX_UNITS,
        Some("gross_primary_productivity_of_biomass_expressed_as_carbon"),
        "gross primary production",
    ),
    (
        "reco",
        FLUX_UNITS,
        None,
        "ecosystem respiration (autotrophic + heterotrophic)",
    ),
    (
        "nee",
        FLUX_UNITS,
        None,
        "net ecosystem exchange reco - gpp (positive: a source to the air)",
    ),
    (
        "discrimination",
        "1e-3",
        None,
        "GPP-weighted ecosystem 13C discrimination",
    ),
    (
        "discrimination_c3",
        "1e-3",
        None,
        "GPP-weighted 13C discrimination of the C3 vegetation",
    ),
    (
        "discrimination_c4",
        "1e-3",
        None,
        "GPP-weighted 13C discrimination of the C4 vegetation",
    ),
    (
        "d13c_assimilate",
        "1e-3",
        None,
        "GPP-weighted d13C of the assimilate (VPDB)",
    ),
    ("c4_share", "1", None, "share of GPP fixed by C4 vegetation"),
    (
        "d13c_respiration",
        "1e-3",
        None,
        "respiration-weighted d13C of ecosystem respiration (VPDB)",
    ),
    (
        "disequilibrium",
        "1e-3",
        None,
        "isotopic disequilibrium d13c_respiration - d13c_assimilate",
    ),
    (
        "isoflux_discrimination",
        "1e-3 kg m-2 s-1",
        None,
        "photosynthetic isoflux gpp x discrimination",
    ),
    (
        "isoflux_disequilibrium",
        "1e-3 kg m-2 s-1",
        None,
        "disequilibrium isoflux reco x disequilibrium",
    ),
];

/// Index of a standard field by name.
pub fn standard_index(name: &str) -> usize {
    STANDARD_FIELDS
        .iter()
        .position(|f| f.0 == name)
        .unwrap_or_else(|| panic!("{name} is not a standard field"))
}

/// One run's month in the units of [`STANDARD_FIELDS`] (same order): each flux is the month's sum
/// (g C m⁻²) ÷ 1000 ÷ the seconds of the calendar month; an isoflux is that member's flux times its
/// ‰ value, 0 when the flux is 0. All NaN for an incomplete month.
pub fn month_values(a: &MonthAggregate, month: (i32, u32)) -> [f64; 12] {
    if !a.complete {
        return [f64::NAN; 12];
    }
    let to_flux = 1e-3 / month_seconds(month);
    let gpp = a.gpp_g_m2 * to_flux;
    let reco = a.reco_g_m2 * to_flux;
    let isoflux = |flux: f64, permil: f64| if flux == 0.0 { 0.0 } else { flux * permil };
    [
        gpp,
        reco,
        reco - gpp,
        a.discrimination_permil,
        a.discrimination_c3_permil,
        a.discrimination_c4_permil,
        a.d13c_assimilate_permil,
        if a.gpp_g_m2 > 0.0 {
            a.gpp_c4_g_m2 / a.gpp_g_m2
        } else {
            f64::NAN
        },
        a.d13c_respiration_permil,
        a.disequilibrium_permil,
        isoflux(gpp, a.discrimination_permil),
        isoflux(reco, a.disequilibrium_permil),
    ]
}

/// Mean and sample sd (n − 1; NaN below two values) over the members' [`month_values`] of one
/// month; members without the month are `None`.
pub fn member_stats(members: &[Option<MonthAggregate>], month: (i32, u32)) -> [(f64, f64); 12] {
    let per_member: Vec<[f64; 12]> = members
        .iter()
        .flatten()
        .map(|a| month_values(a, month))
        .collect();
    std::array::from_fn(|k| {
        let s = stats(per_member.iter().map(|v| v[k]));
        (s.mean, s.sd)
    })
}

/// The monthly rows of one run placed on `month_starts` (None for a month the run lacks).
pub fn align_months(
    rows: &[PeriodRow],
    month_starts: &[(i32, u32)],
) -> Vec<Option<MonthAggregate>> {
    let mut out = vec![None; month_starts.len()];
    for r in rows {
        if let Some(i) = parse_month(&r.key).and_then(|m| month_starts.binary_search(&m).ok()) {
            out[i] = Some(MonthAggregate::from_period_row(r));
        }
    }
    out
}

/// The [`STANDARD_FIELDS`] of a grid from its cells' runs: `cells[c][member][t]` for cell `c` in
/// [lat][lon] order (no member for a cell that was not run), month `t` of `month_starts`. The
/// mean over members of each member's value; with `with_sd` (an ensemble) also the sd.
pub fn standard_fields(
    month_starts: &[(i32, u32)],
    cells: &[Vec<Vec<Option<MonthAggregate>>>],
    with_sd: bool,
) -> Vec<GridField> {
    let (nt, nc) = (month_starts.len(), cells.len());
    let mut mean = vec![vec![f64::NAN; nt * nc]; STANDARD_FIELDS.len()];
    let mut sd = vec![vec![f64::NAN; nt * nc]; STANDARD_FIELDS.len()];
    let mut column: Vec<Option<MonthAggregate>> = Vec::new();
    for (c, members) in cells.iter().enumerate() {
        for (t, &month) in month_starts.iter().enumerate() {
            column.clear();
            column.extend(members.iter().map(|m| m.get(t).copied().flatten()));
            for (k, (m, s)) in member_stats(&column, month).into_iter().enumerate() {
                mean[k][t * nc + c] = m;
                sd[k][t * nc + c] = s;
            }
        }
    }
    STANDARD_FIELDS
        .iter()
        .zip(mean.into_iter().zip(sd))
        .map(|(&(name, units, std, long), (values, sd))| GridField {
            name: name.to_string(),
            units: units.to_string(),
            standard_name: std.map(str::to_string),
            long_name: long.to_string(),
            values,
            sd: with_sd.then_some(sd),
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// Totals for the run summary.

/// Latitude bands of the run summary: name, southern and northern edge (degrees north; a cell
/// belongs to the band that holds its centre, the northern edge included only at 90°).
pub const SUMMARY_REGIONS: [(&str, f64, f64); 4] = [
    ("global", -90.0, 90.0),
    ("north of 30N", 30.0, 90.0),
    ("30S-30N", -30.0, 30.0),
    ("south of 30S", -90.0, -30.0),
];

/// Totals of one region over the months of a [`GridPriors`].
#[derive(Debug, Clone, PartialEq)]
pub struct RegionTotals {
    /// Region name.
    pub name: String,
    /// Land area that was run (m²).
    pub land_area_m2: f64,
    /// Cell-months with a GPP value.
    pub cell_months: usize,
    /// GPP (Pg C yr⁻¹): the carbon fixed over the months ÷ their seconds × a Julian year.
    pub gpp_pg_c_yr: f64,
    /// Δ weighted by GPP × cell area × month length (‰).
    pub discrimination_permil: f64,
    /// C4 share of that GPP.
    pub c4_share: f64,
}

/// Regional totals of GPP, GPP-weighted Δ and C4 share (see [`SUMMARY_REGIONS`]); only land cells
/// with values count. Needs the fields `gpp` (kg C m⁻² s⁻¹), `discrimination` and `c4_share`.
pub fn region_totals(p: &GridPriors) -> Result<Vec<RegionTotals>> {
    let get = |n: &str| {
        p.field(n)
            .map(|f| &f.values)
            .ok_or_else(|| Error::msg(format!("gridded priors have no field `{n}`")))
    };
    let (gpp, disc, c4) = (get("gpp")?, get("discrimination")?, get("c4_share")?);
    let area = p.cell_areas_m2();
    let nc = p.n_cells();
    let nx = p.lon.len();
    let secs: Vec<f64> = p.month_starts.iter().map(|&m| month_seconds(m)).collect();
    let total_s: f64 = secs.iter().sum();
    Ok(SUMMARY_REGIONS
        .iter()
        .map(|&(name, s, n)| {
            let inside = |c: usize| {
                let lat = p.lat[c / nx];
                p.land_mask[c] == 1 && lat >= s && (lat < n || n == 90.0)
            };
            let (mut kg, mut w_disc, mut w_c4, mut kg_disc, mut kg_c4) = (0.0, 0.0, 0.0, 0.0, 0.0);
            let mut cell_months = 0;
            for (t, dt) in secs.iter().enumerate() {
                for c in (0..nc).filter(|&c| inside(c)) {
                    let g = gpp[t * nc + c];
                    if g.is_nan() {
                        continue;
                    }
                    cell_months += 1;
                    let m = g * area[c] * dt;
                    kg += m;
                    let (d, f) = (disc[t * nc + c], c4[t * nc + c]);
                    if !d.is_nan() {
                        w_disc += m * d;
                        kg_disc += m;
                    }
                    if !f.is_nan() {
                        w_c4 += m * f;
                        kg_c4 += m;
                    }
                }
            }
            let ratio = |a: f64, b: f64| if b > 0.0 { a / b } else { f64::NAN };
            RegionTotals {
                name: name.to_string(),
                land_area_m2: (0..nc).filter(|&c| inside(c)).map(|c| area[c]).sum(),
                cell_months,
                gpp_pg_c_yr: ratio(kg, total_s) * SECONDS_PER_YEAR * 1e-12,
                discrimination_permil: ratio(w_disc, kg_disc),
                c4_share: ratio(w_c4, kg_c4),
            }
        })
        .collect())
}
