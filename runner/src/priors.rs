//! Monthly land priors for atmospheric inversions per site (docs/priors.md): the standard fields
//! of [`crate::priors_grid::STANDARD_FIELDS`] — fluxes as monthly means in kg C m⁻² s⁻¹, Δ per
//! pathway, δ13C of the assimilate, the C4 share, δR, the disequilibrium and the isofluxes GPP·Δ
//! and Reco·D — each as a mean and a standard deviation over ensemble members. Without an
//! ensemble the mean is the single run's value and the sd is left empty (CSV) or at the fill value
//! (NetCDF): one run says nothing about spread, and 0 would claim certainty.
//!
//! Written as `priors.csv` and as `priors.nc`, NetCDF classic with CF-1.8 attributes (a
//! `timeSeries` discrete sampling geometry: dimensions `site` and `time`; the site ids are the
//! `site` coordinate, a character array with `_Encoding = "utf-8"`, so xarray decodes them to
//! strings and `.sel(site="id")` works), both atomically.

use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

use netcdf3::{DataSet, FileReader, NC_FILL_F64, Version};

use crate::ensemble::Member;
use crate::error::{Context, Error, Result};
use crate::output::{AtomicFile, fmt_num};
use crate::priors_grid::{
    MonthAggregate, STANDARD_FIELDS, define_month_time, filled, member_stats, months_of_time_bnds,
    nc_err, parse_month, time_axis, write_nc_atomic,
};

/// One site-month of priors.
#[derive(Debug, Clone, PartialEq)]
pub struct PriorRow {
    /// Site id.
    pub site: String,
    /// Latitude (degrees north).
    pub lat: f64,
    /// Longitude (degrees east).
    pub lon: f64,
    /// UTC offset of the site's weather timestamps (hours, local standard time): the months are
    /// months of that clock.
    pub utc_offset_h: f64,
    /// Area weight (dimensionless).
    pub weight: f64,
    /// YYYY-MM.
    pub month: String,
    /// (mean, sd) per [`STANDARD_FIELDS`] entry, in its unit.
    pub values: Vec<(f64, f64)>,
}

/// The priors of one site from its members (one member without an ensemble), per month of the
/// first member that ran.
pub fn prior_rows(
    site: &str,
    (lat, lon, utc_offset_h): (f64, f64, f64),
    weight: f64,
    members: &[Member],
) -> Vec<PriorRow> {
    let ran: Vec<_> = members.iter().filter_map(Member::periods).collect();
    let Some(first) = ran.first() else {
        return Vec::new();
    };
    first
        .monthly
        .iter()
        .filter_map(|(key, _)| {
            let month = parse_month(key)?;
            let column: Vec<Option<MonthAggregate>> = ran
                .iter()
                .map(|p| {
                    p.monthly
                        .iter()
                        .find(|(k, _)| k == key)
                        .map(|(_, v)| MonthAggregate::from_kept(v))
                })
                .collect();
            Some(PriorRow {
                site: site.to_string(),
                lat,
                lon,
                utc_offset_h,
                weight,
                month: key.clone(),
                values: member_stats(&column, month).to_vec(),
            })
        })
        .collect()
}

/// True for the variables in kg C m⁻² s⁻¹ (fluxes and isofluxes): numbers near 1e-8, which the
/// CSV writes in exponent form with every digit rather than rounded to six decimals.
fn is_flux(units: &str) -> bool {
    units.contains("kg")
}

/// Formats a priors value: empty when NaN, fluxes as the shortest exponent form that reads back
/// to the same double, the rest as [`fmt_num`].
fn fmt_value(buf: &mut String, value: f64, flux: bool) {
    if flux && value.is_finite() {
        let _ = write!(buf, "{value:e}");
    } else {
        fmt_num(buf, value);
    }
}

/// Writes `priors.csv`.
pub fn write_priors_csv(path: &Path, rows: &[PriorRow]) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    let mut line = String::from("site,lat,lon,utc_offset_h,weight,month");
    for (name, ..) in STANDARD_FIELDS {
        let _ = write!(line, ",{name},{name}_sd");
    }
    line.push('\n');
    f.writer().write_all(line.as_bytes())?;
    for r in rows {
        line.clear();
        line.push_str(&r.site);
        for x in [r.lat, r.lon, r.utc_offset_h, r.weight] {
            line.push(',');
            fmt_num(&mut line, x);
        }
        let _ = write!(line, ",{}", r.month);
        for ((m, s), (_, units, ..)) in r.values.iter().zip(STANDARD_FIELDS) {
            for x in [m, s] {
                line.push(',');
                fmt_value(&mut line, *x, is_flux(units));
            }
        }
        line.push('\n');
        f.writer().write_all(line.as_bytes())?;
    }
    f.commit()
}

/// Reads a `priors.csv` written by [`write_priors_csv`] (empty cells read as NaN); the header
/// must be this version's.
pub fn read_priors_csv(path: &Path) -> Result<Vec<PriorRow>> {
    let mut rdr =
        csv::Reader::from_path(path).with_context(|| format!("cannot read {}", path.display()))?;
    let header = rdr
        .headers()
        .with_context(|| format!("cannot read {}", path.display()))?
        .clone();
    if header.get(3) != Some("utc_offset_h") || header.len() != 6 + 2 * STANDARD_FIELDS.len() {
        return Err(Error::msg(format!(
            "{}: not a priors file of this isodisc version (header `{}`): an earlier isodisc \
             wrote it; run the batch into a new folder",
            path.display(),
            header.iter().collect::<Vec<_>>().join(",")
        )));
    }
    let mut rows = Vec::new();
    for (i, rec) in rdr.records().enumerate() {
        let rec = rec.with_context(|| format!("cannot read {}", path.display()))?;
        let cell = |c: usize| rec.get(c).unwrap_or("");
        let num = |c: usize| -> Result<f64> {
            let s = cell(c);
            if s.is_empty() {
                Ok(f64::NAN)
            } else {
                s.parse().map_err(|_| {
                    Error::msg(format!(
                        "{} line {}, column {}: `{s}` is not a number",
                        path.display(),
                        i + 2,
                        header.get(c).unwrap_or("?")
                    ))
                })
            }
        };
        let values = (0..STANDARD_FIELDS.len())
            .map(|k| Ok((num(6 + 2 * k)?, num(7 + 2 * k)?)))
            .collect::<Result<_>>()?;
        rows.push(PriorRow {
            site: cell(0).to_string(),
            lat: num(1)?,
            lon: num(2)?,
            utc_offset_h: num(3)?,
            weight: num(4)?,
            month: cell(5).to_string(),
            values,
        });
    }
    Ok(rows)
}

/// The priors as laid out in the NetCDF file: sites × months.
#[derive(Debug, Clone, PartialEq)]
pub struct PriorsGrid {
    /// Site ids, in order of first appearance.
    pub sites: Vec<String>,
    /// Latitude (degrees north) per site.
    pub lat: Vec<f64>,
    /// Longitude (degrees east) per site.
    pub lon: Vec<f64>,
    /// UTC offset (hours) per site.
    pub utc_offset_h: Vec<f64>,
    /// Area weight per site.
    pub weight: Vec<f64>,
    /// Months (YYYY-MM), sorted.
    pub months: Vec<String>,
    /// Per variable name (`gpp`, `gpp_sd`, ...): values [site][month] row-major; NaN where missing.
    pub values: Vec<(String, Vec<f64>)>,
}

impl PriorsGrid {
    /// Lays rows out on the site × month grid.
    pub fn from_rows(rows: &[PriorRow]) -> Self {
        let mut g = Self {
            sites: Vec::new(),
            lat: Vec::new(),
            lon: Vec::new(),
            utc_offset_h: Vec::new(),
            weight: Vec::new(),
            months: Vec::new(),
            values: Vec::new(),
        };
        for r in rows {
            if !g.sites.contains(&r.site) {
                g.sites.push(r.site.clone());
                g.lat.push(r.lat);
                g.lon.push(r.lon);
                g.utc_offset_h.push(r.utc_offset_h);
                g.weight.push(r.weight);
            }
        }
        g.months = rows.iter().map(|r| r.month.clone()).collect();
        g.months.sort();
        g.months.dedup();
        let (ns, nm) = (g.sites.len(), g.months.len());
        for (name, ..) in STANDARD_FIELDS {
            g.values.push((name.to_string(), vec![f64::NAN; ns * nm]));
            g.values
                .push((format!("{name}_sd"), vec![f64::NAN; ns * nm]));
        }
        for r in rows {
            let s = g.sites.iter().position(|x| *x == r.site).expect("listed");
            let m = g.months.binary_search(&r.month).expect("listed");
            for (k, (mean, sd)) in r.values.iter().enumerate() {
                g.values[2 * k].1[s * nm + m] = *mean;
                g.values[2 * k + 1].1[s * nm + m] = *sd;
            }
        }
        g
    }
}

/// `s` as exactly `len` bytes, NUL-padded (NetCDF classic has fixed-length character arrays).
fn fixed_bytes(s: &str, len: usize) -> Vec<u8> {
    let mut b = s.as_bytes().to_vec();
    b.resize(len, 0);
    b
}

/// Writes `priors.nc` (NetCDF classic, CF-1.8) with global `title` and `history`.
pub fn write_priors_nc(path: &Path, rows: &[PriorRow], title: &str, history: &str) -> Result<()> {
    let g = PriorsGrid::from_rows(rows);
    let months: Vec<(i32, u32)> = g
        .months
        .iter()
        .map(|m| {
            parse_month(m)
                .ok_or_else(|| Error::msg(format!("priors: `{m}` is not a YYYY-MM month")))
        })
        .collect::<Result<_>>()?;
    let (y0, time, time_bnds) = time_axis(&months);
    let strlen = g.sites.iter().map(String::len).max().unwrap_or(1).max(1);
    let mut ds = DataSet::new();
    let def = |e| nc_err(path, "definition", e);
    ds.add_fixed_dim("site", g.sites.len()).map_err(def)?;
    ds.add_fixed_dim("time", months.len()).map_err(def)?;
    ds.add_fixed_dim("nv", 2).map_err(def)?;
    ds.add_fixed_dim("name_strlen", strlen).map_err(def)?;
    let attrs = |ds: &mut DataSet, var: &str, list: &[(&str, &str)]| -> Result<()> {
        for (k, v) in list {
            ds.add_var_attr_string(var, k, v).map_err(def)?;
        }
        Ok(())
    };
    ds.add_var_u8("site", &["site", "name_strlen"])
        .map_err(def)?;
    attrs(
        &mut ds,
        "site",
        &[
            ("cf_role", "timeseries_id"),
            ("long_name", "site id"),
            ("_Encoding", "utf-8"),
        ],
    )?;
    for (name, units, std, long) in [
        (
            "lat",
            "degrees_north",
            Some("latitude"),
            "latitude of the site",
        ),
        (
            "lon",
            "degrees_east",
            Some("longitude"),
            "longitude of the site",
        ),
        (
            "utc_offset",
            "hours",
            None,
            "UTC offset of the site's clock (local standard time); its months are months of that \
             clock",
        ),
        ("weight", "1", None, "area weight of the site"),
    ] {
        ds.add_var_f64(name, &["site"]).map_err(def)?;
        attrs(&mut ds, name, &[("units", units), ("long_name", long)])?;
        if let Some(s) = std {
            attrs(&mut ds, name, &[("standard_name", s)])?;
        }
    }
    define_month_time(
        &mut ds,
        path,
        y0,
        "middle of the month, on each site's clock (see utc_offset)",
    )?;
    for (k, (_, units, std, long)) in STANDARD_FIELDS.iter().enumerate() {
        let mean_name = g.values[2 * k].0.as_str();
        let sd_name = g.values[2 * k + 1].0.as_str();
        let sd_long = format!("{long}, standard deviation over ensemble members");
        for (var, long) in [(mean_name, *long), (sd_name, sd_long.as_str())] {
            ds.add_var_f64(var, &["site", "time"]).map_err(def)?;
            attrs(
                &mut ds,
                var,
                &[
                    ("units", units),
                    ("long_name", long),
                    ("coordinates", "lat lon"),
                    ("cell_methods", "time: mean"),
                ],
            )?;
            ds.add_var_attr_f64(var, "_FillValue", vec![NC_FILL_F64])
                .map_err(def)?;
        }
        if let Some(s) = std {
            attrs(&mut ds, mean_name, &[("standard_name", s)])?;
        }
        attrs(&mut ds, mean_name, &[("ancillary_variables", sd_name)])?;
    }
    let source = format!(
        "isodisc {} (site model with carbon/13C pools)",
        env!("CARGO_PKG_VERSION")
    );
    for (k, v) in [
        ("title", title),
        ("history", history),
        ("Conventions", "CF-1.8"),
        ("featureType", "timeSeries"),
        ("source", &source),
        ("isodisc_version", env!("CARGO_PKG_VERSION")),
    ] {
        ds.add_global_attr_string(k, v).map_err(def)?;
    }

    write_nc_atomic(path, &ds, Version::Classic, |fw| {
        let w = |e| nc_err(path, "write", e);
        let chars: Vec<u8> = g
            .sites
            .iter()
            .flat_map(|s| fixed_bytes(s, strlen))
            .collect();
        fw.write_var_u8("site", &chars).map_err(w)?;
        fw.write_var_f64("lat", &g.lat).map_err(w)?;
        fw.write_var_f64("lon", &g.lon).map_err(w)?;
        fw.write_var_f64("utc_offset", &g.utc_offset_h).map_err(w)?;
        fw.write_var_f64("weight", &g.weight).map_err(w)?;
        fw.write_var_f64("time", &time).map_err(w)?;
        fw.write_var_f64("time_bnds", &time_bnds).map_err(w)?;
        for (var, v) in &g.values {
            fw.write_var_f64(var, &filled(v)).map_err(w)?;
        }
        Ok(())
    })
}

/// Reads a `priors.nc` written by [`write_priors_nc`] back onto its grid (fill values as NaN),
/// with its global attributes `title`, `history` and `Conventions`.
pub fn read_priors_nc(path: &Path) -> Result<(PriorsGrid, Vec<(String, String)>)> {
    let r = |e| nc_err(path, "read", e);
    let mut fr = FileReader::open(path).map_err(r)?;
    let (ns, strlen, attrs, units) = {
        let ds = fr.data_set();
        let units = ds
            .get_var_attr_as_string("time", "units")
            .unwrap_or_default();
        let dim = |n: &str| ds.dim_size(n).unwrap_or(0);
        let attrs: Vec<(String, String)> = ["title", "history", "Conventions"]
            .iter()
            .map(|a| {
                (
                    a.to_string(),
                    ds.get_global_attr_as_string(a).unwrap_or_default(),
                )
            })
            .collect();
        (dim("site"), dim("name_strlen"), attrs, units)
    };
    let chars =
        fr.read_var("site").map_err(r)?.get_u8_into().map_err(|_| {
            Error::msg(format!("{}: site is not a character array", path.display()))
        })?;
    let sites = (0..ns)
        .map(|i| {
            let b = chars.get(i * strlen..(i + 1) * strlen).unwrap_or_default();
            String::from_utf8_lossy(b)
                .trim_end_matches('\0')
                .to_string()
        })
        .collect();
    let mut f64_var = |n: &str| -> Result<Vec<f64>> {
        let v =
            fr.read_var(n).map_err(r)?.get_f64_into().map_err(|_| {
                Error::msg(format!("{}: variable {n} is not double", path.display()))
            })?;
        Ok(v.into_iter()
            .map(|x| if x == NC_FILL_F64 { f64::NAN } else { x })
            .collect())
    };
    let (lat, lon) = (f64_var("lat")?, f64_var("lon")?);
    let (utc_offset_h, weight) = (f64_var("utc_offset")?, f64_var("weight")?);
    let months = months_of_time_bnds(path, &units, &f64_var("time_bnds")?)?
        .into_iter()
        .map(|(y, m)| format!("{y:04}-{m:02}"))
        .collect();
    let mut values = Vec::new();
    for (name, ..) in STANDARD_FIELDS {
        for var in [name.to_string(), format!("{name}_sd")] {
            let v = f64_var(&var)?;
            values.push((var, v));
        }
    }
    Ok((
        PriorsGrid {
            sites,
            lat,
            lon,
            utc_offset_h,
            weight,
            months,
            values,
        },
        attrs,
    ))
}

/// Writes `priors.csv` and `priors.nc` into `dir`. Without rows (a shard with no site) only the
/// CSV header is written: NetCDF classic has no empty fixed dimensions, and an empty file would
/// claim a site grid that does not exist.
pub fn write_priors(dir: &Path, rows: &[PriorRow], title: &str, history: &str) -> Result<()> {
    write_priors_csv(&dir.join("priors.csv"), rows)?;
    if rows.is_empty() {
        return Ok(());
    }
    write_priors_nc(&dir.join("priors.nc"), rows, title, history)
}
