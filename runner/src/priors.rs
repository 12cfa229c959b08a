//! Monthly land priors for atmospheric inversions (docs/science.md), per site and month: GPP,
//! flux-weighted Δ, the C4 share of GPP, Reco, δR, the disequilibrium D = δR − δP and the isoflux
//! Reco·D, each as a mean and a standard deviation over ensemble members. Without an ensemble the
//! mean is the single run's value and the sd is left empty (CSV) or at the fill value (NetCDF):
//! one run says nothing about spread, and 0 would claim certainty.
//!
//! Written as `priors.csv` and as `priors.nc`, NetCDF classic with CF-1.8 attributes (a
//! `timeSeries` discrete sampling geometry: dimensions `site` and `month`), both atomically.

use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

use netcdf3::{DataSet, FileReader, FileWriter, NC_FILL_F64, Version};

use crate::ensemble::summary::period_stats;
use crate::ensemble::{Member, kept_col};
use crate::error::{Context, Error, Result};
use crate::output::{AtomicFile, fmt_num};

/// The prior variables: name (also the column of its mean; `<name>_sd` holds the sd), CF units
/// and long name.
pub const PRIOR_VARIABLES: [(&str, &str, &str); 7] = [
    (
        "gpp",
        "g m-2",
        "gross primary production summed over the month (grams of carbon)",
    ),
    (
        "discrimination",
        "1e-3",
        "GPP-weighted ecosystem 13C discrimination (permil)",
    ),
    ("c4_share", "1", "share of GPP fixed by C4 vegetation"),
    (
        "reco",
        "g m-2",
        "ecosystem respiration summed over the month (grams of carbon)",
    ),
    (
        "d13c_respiration",
        "1e-3",
        "respiration-weighted d13C of ecosystem respiration (permil VPDB)",
    ),
    (
        "disequilibrium",
        "1e-3",
        "isotopic disequilibrium d13C_respiration - d13C_assimilate (permil)",
    ),
    (
        "isoflux_disequilibrium",
        "g m-2 1e-3",
        "disequilibrium isoflux, reco x disequilibrium (permil g carbon m-2)",
    ),
];

/// One site-month of priors.
#[derive(Debug, Clone, PartialEq)]
pub struct PriorRow {
    /// Site id.
    pub site: String,
    /// Latitude (degrees north).
    pub lat: f64,
    /// Longitude (degrees east).
    pub lon: f64,
    /// Area weight (dimensionless).
    pub weight: f64,
    /// YYYY-MM.
    pub month: String,
    /// (mean, sd) per [`PRIOR_VARIABLES`] entry, in its unit.
    pub values: Vec<(f64, f64)>,
}

/// The priors of one site from its members (one member without an ensemble).
pub fn prior_rows(
    site: &str,
    lat: f64,
    lon: f64,
    weight: f64,
    members: &[Member],
) -> Vec<PriorRow> {
    period_stats(members, false)
        .into_iter()
        .map(|(month, stats)| PriorRow {
            site: site.to_string(),
            lat,
            lon,
            weight,
            month,
            values: PRIOR_VARIABLES
                .iter()
                .map(|(name, _, _)| {
                    let s = stats[kept_col(name)];
                    (s.mean, s.sd)
                })
                .collect(),
        })
        .collect()
}

/// Writes `priors.csv`.
pub fn write_priors_csv(path: &Path, rows: &[PriorRow]) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    let mut line = String::from("site,lat,lon,weight,month");
    for (name, _, _) in PRIOR_VARIABLES {
        let _ = write!(line, ",{name},{name}_sd");
    }
    line.push('\n');
    f.writer().write_all(line.as_bytes())?;
    for r in rows {
        line.clear();
        line.push_str(&r.site);
        for x in [r.lat, r.lon, r.weight] {
            line.push(',');
            fmt_num(&mut line, x);
        }
        let _ = write!(line, ",{}", r.month);
        for (m, s) in &r.values {
            line.push(',');
            fmt_num(&mut line, *m);
            line.push(',');
            fmt_num(&mut line, *s);
        }
        line.push('\n');
        f.writer().write_all(line.as_bytes())?;
    }
    f.commit()
}

/// Reads a `priors.csv` written by [`write_priors_csv`] (empty cells read as NaN).
pub fn read_priors_csv(path: &Path) -> Result<Vec<PriorRow>> {
    let mut rdr =
        csv::Reader::from_path(path).with_context(|| format!("cannot read {}", path.display()))?;
    let num = |s: &str| -> Result<f64> {
        if s.is_empty() {
            Ok(f64::NAN)
        } else {
            s.parse()
                .map_err(|_| Error::msg(format!("{}: `{s}` is not a number", path.display())))
        }
    };
    let mut rows = Vec::new();
    for rec in rdr.records() {
        let rec = rec.with_context(|| format!("cannot read {}", path.display()))?;
        let cell = |i: usize| rec.get(i).unwrap_or("");
        let values = (0..PRIOR_VARIABLES.len())
            .map(|k| Ok((num(cell(5 + 2 * k))?, num(cell(6 + 2 * k))?)))
            .collect::<Result<_>>()?;
        rows.push(PriorRow {
            site: cell(0).to_string(),
            lat: num(cell(1))?,
            lon: num(cell(2))?,
            weight: num(cell(3))?,
            month: cell(4).to_string(),
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
    /// Latitude, longitude (degrees) and weight per site.
    pub lat: Vec<f64>,
    /// Longitude (degrees east) per site.
    pub lon: Vec<f64>,
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
        let mut sites: Vec<String> = Vec::new();
        let (mut lat, mut lon, mut weight) = (Vec::new(), Vec::new(), Vec::new());
        for r in rows {
            if !sites.contains(&r.site) {
                sites.push(r.site.clone());
                lat.push(r.lat);
                lon.push(r.lon);
                weight.push(r.weight);
            }
        }
        let mut months: Vec<String> = rows.iter().map(|r| r.month.clone()).collect();
        months.sort();
        months.dedup();
        let (ns, nm) = (sites.len(), months.len());
        let mut values: Vec<(String, Vec<f64>)> = Vec::new();
        for (name, _, _) in PRIOR_VARIABLES {
            values.push((name.to_string(), vec![f64::NAN; ns * nm]));
            values.push((format!("{name}_sd"), vec![f64::NAN; ns * nm]));
        }
        for r in rows {
            let s = sites.iter().position(|x| *x == r.site).expect("listed");
            let m = months.binary_search(&r.month).expect("listed");
            for (k, (mean, sd)) in r.values.iter().enumerate() {
                values[2 * k].1[s * nm + m] = *mean;
                values[2 * k + 1].1[s * nm + m] = *sd;
            }
        }
        Self {
            sites,
            lat,
            lon,
            weight,
            months,
            values,
        }
    }
}

/// Days from 1970-01-01 to the first day of a YYYY-MM month (proleptic Gregorian; the
/// days-from-civil algorithm of H. Hinnant, "chrono-compatible low-level date algorithms").
fn days_since_epoch(month: &str) -> Option<f64> {
    let (y, m) = month.split_once('-')?;
    let (y, m): (i64, i64) = (y.parse().ok()?, m.parse().ok()?);
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    Some((era * 146_097 + doe - 719_468) as f64)
}

/// Length of a YYYY-MM label.
const MONTH_LEN: usize = 7;

/// `s` as exactly `len` bytes, NUL-padded (NetCDF classic has fixed-length character arrays).
fn fixed_bytes(s: &str, len: usize) -> Vec<u8> {
    let mut b = s.as_bytes().to_vec();
    b.resize(len, 0);
    b
}

fn nc_err(what: &str, e: impl std::fmt::Debug) -> Error {
    // netcdf3's WriteError has no Display: show its Debug form.
    Error::msg(format!("NetCDF {what}: {e:?}"))
}

fn nc_file_err(path: &Path, what: &str, e: impl std::fmt::Debug) -> Error {
    Error::msg(format!("{}: NetCDF {what}: {e:?}", path.display()))
}

/// Writes `priors.nc` (NetCDF classic, CF-1.8) with global `title` and `history`.
pub fn write_priors_nc(path: &Path, rows: &[PriorRow], title: &str, history: &str) -> Result<()> {
    let g = PriorsGrid::from_rows(rows);
    let strlen = g.sites.iter().map(String::len).max().unwrap_or(1).max(1);
    let mut ds = DataSet::new();
    let def = |e| nc_err("definition", e);
    ds.add_fixed_dim("site", g.sites.len()).map_err(def)?;
    ds.add_fixed_dim("month", g.months.len()).map_err(def)?;
    ds.add_fixed_dim("name_strlen", strlen).map_err(def)?;
    ds.add_fixed_dim("month_strlen", MONTH_LEN).map_err(def)?;
    ds.add_var_u8("month_label", &["month", "month_strlen"])
        .map_err(def)?;
    ds.add_var_attr_string("month_label", "long_name", "month, YYYY-MM")
        .map_err(def)?;
    ds.add_var_u8("site_name", &["site", "name_strlen"])
        .map_err(def)?;
    ds.add_var_attr_string("site_name", "cf_role", "timeseries_id")
        .map_err(def)?;
    ds.add_var_attr_string("site_name", "long_name", "site id")
        .map_err(def)?;
    for (name, units, std, long) in [
        ("lat", "degrees_north", "latitude", "latitude of the site"),
        ("lon", "degrees_east", "longitude", "longitude of the site"),
    ] {
        ds.add_var_f64(name, &["site"]).map_err(def)?;
        ds.add_var_attr_string(name, "units", units).map_err(def)?;
        ds.add_var_attr_string(name, "standard_name", std)
            .map_err(def)?;
        ds.add_var_attr_string(name, "long_name", long)
            .map_err(def)?;
    }
    ds.add_var_f64("weight", &["site"]).map_err(def)?;
    ds.add_var_attr_string("weight", "units", "1")
        .map_err(def)?;
    ds.add_var_attr_string("weight", "long_name", "area weight of the site")
        .map_err(def)?;
    ds.add_var_f64("time", &["month"]).map_err(def)?;
    ds.add_var_attr_string("time", "units", "days since 1970-01-01 00:00:00")
        .map_err(def)?;
    ds.add_var_attr_string("time", "calendar", "standard")
        .map_err(def)?;
    ds.add_var_attr_string("time", "standard_name", "time")
        .map_err(def)?;
    ds.add_var_attr_string(
        "time",
        "long_name",
        "start of the month, local standard time of each site",
    )
    .map_err(def)?;
    for (k, (name, units, long)) in PRIOR_VARIABLES.iter().enumerate() {
        for (var, long) in [
            (
                g.values[2 * k].0.as_str(),
                format!("{long}, mean over ensemble members"),
            ),
            (
                g.values[2 * k + 1].0.as_str(),
                format!("{long}, standard deviation over ensemble members"),
            ),
        ] {
            ds.add_var_f64(var, &["site", "month"]).map_err(def)?;
            ds.add_var_attr_string(var, "units", units).map_err(def)?;
            ds.add_var_attr_string(var, "long_name", long)
                .map_err(def)?;
            ds.add_var_attr_string(var, "coordinates", "time lat lon site_name")
                .map_err(def)?;
            ds.add_var_attr_f64(var, "_FillValue", vec![NC_FILL_F64])
                .map_err(def)?;
        }
        let _ = name;
    }
    ds.add_global_attr_string("title", title).map_err(def)?;
    ds.add_global_attr_string("history", history).map_err(def)?;
    ds.add_global_attr_string("Conventions", "CF-1.8")
        .map_err(def)?;
    ds.add_global_attr_string("featureType", "timeSeries")
        .map_err(def)?;
    ds.add_global_attr_string("source", "isodisc (site model with carbon/13C pools)")
        .map_err(def)?;

    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let tmp = path.with_file_name(format!(".{name}.tmp-{}", std::process::id()));
    crate::output::clean_stale(path);
    crate::output::track_temp(&tmp);
    let result = (|| -> Result<()> {
        let w = |e| nc_file_err(path, "write", e);
        let mut fw = FileWriter::open(&tmp).map_err(w)?;
        fw.set_def(&ds, Version::Classic, 0).map_err(w)?;
        let chars: Vec<u8> = g
            .sites
            .iter()
            .flat_map(|s| fixed_bytes(s, strlen))
            .collect();
        fw.write_var_u8("site_name", &chars).map_err(w)?;
        let labels: Vec<u8> = g
            .months
            .iter()
            .flat_map(|m| fixed_bytes(m, MONTH_LEN))
            .collect();
        fw.write_var_u8("month_label", &labels).map_err(w)?;
        fw.write_var_f64("lat", &g.lat).map_err(w)?;
        fw.write_var_f64("lon", &g.lon).map_err(w)?;
        fw.write_var_f64("weight", &g.weight).map_err(w)?;
        let time: Vec<f64> = g
            .months
            .iter()
            .map(|m| days_since_epoch(m).unwrap_or(NC_FILL_F64))
            .collect();
        fw.write_var_f64("time", &time).map_err(w)?;
        for (var, v) in &g.values {
            let filled: Vec<f64> = v
                .iter()
                .map(|x| if x.is_nan() { NC_FILL_F64 } else { *x })
                .collect();
            fw.write_var_f64(var, &filled).map_err(w)?;
        }
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

/// Reads a `priors.nc` written by [`write_priors_nc`] back onto its grid (fill values as NaN),
/// with its global attributes `title`, `history` and `Conventions`.
pub fn read_priors_nc(path: &Path) -> Result<(PriorsGrid, Vec<(String, String)>)> {
    let r = |e| nc_err("read", e);
    let mut fr = FileReader::open(path).map_err(r)?;
    let (ns, nm, strlen, attrs) = {
        let ds = fr.data_set();
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
        (dim("site"), dim("month"), dim("name_strlen"), attrs)
    };
    let mut strings = |var: &str, n: usize, len: usize| -> Result<Vec<String>> {
        let chars = fr
            .read_var(var)
            .map_err(r)?
            .get_u8_into()
            .unwrap_or_default();
        Ok((0..n)
            .map(|i| {
                let b = chars.get(i * len..(i + 1) * len).unwrap_or_default();
                String::from_utf8_lossy(b)
                    .trim_end_matches('\0')
                    .to_string()
            })
            .collect())
    };
    let sites = strings("site_name", ns, strlen)?;
    let months = strings("month_label", nm, MONTH_LEN)?;
    let mut f64_var = |n: &str| -> Result<Vec<f64>> {
        let v =
            fr.read_var(n).map_err(r)?.get_f64_into().map_err(|_| {
                Error::msg(format!("{}: variable {n} is not double", path.display()))
            })?;
        Ok(v.into_iter()
            .map(|x| if x == NC_FILL_F64 { f64::NAN } else { x })
            .collect())
    };
    let (lat, lon, weight) = (f64_var("lat")?, f64_var("lon")?, f64_var("weight")?);
    let mut values = Vec::new();
    for (name, _, _) in PRIOR_VARIABLES {
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
