//! A site's weather from a NetCDF time series (`[forcing] path = "x.nc"` in a site file): the
//! variables named in `[forcing.columns]`, each with dimensions `(time)` or `(time, 1, …)`, their
//! units from the `units` attribute (or `[forcing.units]`) converted by the CSV reader's table,
//! time from the CF time coordinate. The steps are the ones the CSV reader would yield for the
//! same values; the file must be complete (NetCDF site files are distributed gap-filled), so a
//! missing value is an error naming the file, variable and time index.

use std::path::Path;

use isodisc_model::water::pressure_from_elevation_kpa;

use super::forcing::{assemble, checked, mapped, read_times, resolve_unit};
use super::{NcIn, dim_names, open};
use crate::error::{Error, Result};
use crate::forcing::config::N_VARIABLES;
use crate::forcing::{ForcingConfig, ForcingReport, ForcingStep, LocalTime, PerVariable};

/// True when `path` starts with a NetCDF (CDF-1, -2, -5) or HDF5 signature.
pub fn is_netcdf(path: &Path) -> bool {
    let mut magic = [0u8; 4];
    std::fs::File::open(path)
        .and_then(|mut f| std::io::Read::read_exact(&mut f, &mut magic))
        .is_ok()
        && matches!(&magic, b"CDF\x01" | b"CDF\x02" | b"CDF\x05" | b"\x89HDF")
}

/// The `[forcing]` keys that only a CSV file uses, set in `config`.
fn csv_only_keys(config: &ForcingConfig) -> Vec<&'static str> {
    let c = config;
    [
        ("preset", c.preset.is_some()),
        ("delimiter", c.delimiter.is_some()),
        ("header_line", c.header_line.is_some()),
        ("comment", c.comment.is_some()),
        ("time_column", c.time_column.is_some()),
        ("time_format", c.time_format.is_some()),
        ("date_column", c.date_column.is_some()),
        ("date_format", c.date_format.is_some()),
        ("year_column", c.year_column.is_some()),
        ("month_column", c.month_column.is_some()),
        ("day_column", c.day_column.is_some()),
        ("doy_column", c.doy_column.is_some()),
        ("hour_column", c.hour_column.is_some()),
        ("minute_column", c.minute_column.is_some()),
        ("typical_year", c.typical_year.is_some()),
        ("timestamp_marks", c.timestamp_marks.is_some()),
        ("missing", c.missing.is_some()),
        ("max_gap_hours", c.max_gap_hours.is_some()),
        ("precip_period_column", c.precip_period_column.is_some()),
        ("qc_max", c.qc_max.is_some()),
    ]
    .into_iter()
    .filter_map(|(k, set)| set.then_some(k))
    .collect()
}

/// Reads the NetCDF weather of a site: its steps in `from`..`to` (inclusive start, exclusive
/// end) and the report a run prints. Times are taken as written in the file (decoded from the CF
/// units and calendar), in the zone the site's `utc_offset_h` names: 0 for a file in UTC.
pub fn read_site(
    config: &ForcingConfig,
    site_dir: &Path,
    elevation_m: f64,
    from: Option<LocalTime>,
    to: Option<LocalTime>,
) -> Result<(Vec<ForcingStep>, ForcingReport)> {
    let path = site_dir.join(&config.path);
    let keys = csv_only_keys(config);
    if !keys.is_empty() {
        return Err(Error::msg(format!(
            "{} is a NetCDF file: forcing.{} appl{} to CSV files only; a NetCDF file takes \
             path, columns, units, scale, step_minutes and ppfd_per_sw",
            path.display(),
            keys.join(", forcing."),
            if keys.len() == 1 { "ies" } else { "y" }
        )));
    }
    let reader = open(&path)?;
    let ft = read_times(&reader)?;
    let times = &ft.times;
    for i in 1..times.len() {
        if times[i] <= times[i - 1] {
            return Err(Error::msg(format!(
                "{}, variable `time`, index {i}: {} is not after the step before it ({}): time \
                 must increase",
                path.display(),
                times[i],
                times[i - 1]
            )));
        }
    }
    let step = match (times.first(), times.get(1)) {
        (Some(a), Some(b)) => b.minutes() - a.minutes(),
        _ => {
            return Err(Error::msg(format!(
                "{}: fewer than two time steps: the step length is unknown",
                path.display()
            )));
        }
    };
    for i in 2..times.len() {
        let d = times[i].minutes() - times[i - 1].minutes();
        if d != step {
            return Err(Error::msg(format!(
                "{}, variable `time`, index {i}: {} follows {} after {d} minutes, but the first \
                 step is {step} minutes: the steps must be regular",
                path.display(),
                times[i],
                times[i - 1]
            )));
        }
    }
    let step_minutes = u32::try_from(step)
        .ok()
        .filter(|s| (1..=1440).contains(s))
        .ok_or_else(|| {
            Error::msg(format!(
                "{}: the step is {step} minutes; isodisc needs 1 to 1440",
                path.display()
            ))
        })?;
    if let Some(s) = config.step_minutes
        && s != step_minutes
    {
        return Err(Error::msg(format!(
            "{}: forcing.step_minutes = {s} but the file's time axis steps by {step_minutes} \
             minutes",
            path.display()
        )));
    }

    let vars = mapped(&config.columns);
    let mut units = PerVariable::<String>::default();
    for (v, name) in &vars {
        check_dims(&reader, name, &ft.time_dim)?;
        let unit = resolve_unit(&reader, *v, name, config.units.get(*v), "site file")?;
        *units.slot(*v) = Some(unit);
    }
    let plan = ForcingConfig {
        units,
        step_minutes: Some(step_minutes),
        ..config.clone()
    }
    .plan()
    .map_err(|e| Error::msg(format!("{}: {e}", path.display())))?;

    let t0 = from.map_or(0, |f| times.partition_point(|t| *t < f));
    let t1 = to.map_or(times.len(), |t| times.partition_point(|x| *x < t));
    if t0 >= t1 {
        return Err(Error::msg(format!(
            "{}: no step in the period asked for: the file covers {} to {}",
            path.display(),
            times[0],
            times[times.len() - 1]
        )));
    }
    let mut series = Vec::new();
    for (v, name) in &vars {
        let Some(m) = plan.mappings[v.index()].as_ref() else {
            continue; // a humidity variable not in use
        };
        let ndim = reader.var(name)?.ndim();
        let mut ranges = vec![None; ndim];
        ranges[0] = Some(t0..t1);
        let values: Vec<f64> = reader
            .read_slab(name, &ranges)?
            .into_iter()
            .map(|x| x * m.scale + m.offset)
            .collect();
        series.push((*v, *name, values));
    }

    let pressure_default = pressure_from_elevation_kpa(elevation_m);
    let mut steps = Vec::with_capacity(t1 - t0);
    let mut values = [f64::NAN; N_VARIABLES];
    for (k, time) in times[t0..t1].iter().enumerate() {
        for (v, name, data) in &series {
            values[v.index()] = checked(&plan, *v, data[k]).map_err(|why| {
                Error::msg(format!(
                    "{}, variable `{name}`, time index {} ({time}): {why}; a NetCDF site file \
                     must be complete (isodisc fills gaps in CSV files only)",
                    path.display(),
                    t0 + k
                ))
            })?;
        }
        steps.push(assemble(
            &plan,
            &values,
            *time,
            (t0 + k) as u64 + 1,
            pressure_default,
        ));
    }
    let report = ForcingReport {
        path: path.clone(),
        rows_read: times.len(),
        steps: steps.len(),
        step_minutes,
        first: steps.first().map(|s| s.time),
        last: steps.last().map(|s| s.time),
        file_first: times.first().copied(),
        file_last: times.last().copied(),
        read: series.iter().map(|(v, ..)| *v).collect(),
        notes: vec![format!(
            "{} time series (CF time, {} calendar); units from the variables' attributes",
            reader.format_name(),
            ft.calendar.name()
        )],
        header_line: 0,
        ..Default::default()
    };
    Ok((steps, report))
}

/// A site variable is `(time)` or `(time, 1, …)`: one point.
fn check_dims(reader: &NcIn, name: &str, time_dim: &str) -> Result<()> {
    let var = reader.var(name)?;
    let dims = dim_names(var);
    let one_point = dims.first().is_some_and(|d| d == time_dim)
        && var.dimensions()[1..].iter().all(|d| d.size == 1);
    if !one_point {
        return Err(Error::msg(format!(
            "{}, variable `{name}`: dimensions ({}) are not ({time_dim}) or ({time_dim}, 1, 1): \
             a site's weather is one point (for a grid, use `isodisc grid`)",
            reader.path().display(),
            dims.join(", ")
        )));
    }
    Ok(())
}
