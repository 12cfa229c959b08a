//! Gridded weather from NetCDF files: variables `(time, lat, lon)` mapped by name to isodisc's
//! weather variables, several files joined along time, converted to the project's units, and one
//! cell's steps built as [`ForcingStep`]s for the same simulation `isodisc run` does.
//!
//! Times are UTC and mark the start of the step each value holds for. The run needs a regular
//! step on the standard calendar: a `noleap` file over a leap year misses 29 February and is
//! refused where the gap is; a `360_day` or `all_leap` date that the standard calendar lacks
//! (30 February, 29 February 2001) is refused with its index.

use std::ops::Range;
use std::path::{Path, PathBuf};

use isodisc_model::water::pressure_from_elevation_kpa;
use serde::Deserialize;

use super::cf_time::{Calendar, TimeUnits};
use super::{GridAxes, NcIn, attr_text, dim_names, open, table_unit};
use crate::error::{Error, Result};
use crate::forcing::config::{N_VARIABLES, Plan};
use crate::forcing::reader::vpd_from_humidity_kpa;
use crate::forcing::{ForcingConfig, ForcingStep, LocalTime, PerVariable, Variable};

/// The `[forcing]` table of a grid file.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NcForcingConfig {
    /// NetCDF files, relative to the grid file; joined along time (in any order).
    pub files: Vec<PathBuf>,
    /// The NetCDF variable of each weather variable (`t_air = "tas"`).
    pub variables: PerVariable<String>,
    /// Units that replace a variable's `units` attribute (missing or unusual attributes).
    #[serde(default)]
    pub units: PerVariable<String>,
    /// PPFD per W m⁻² of shortwave (µmol J⁻¹) where only one of them is given. Default 2.1.
    #[serde(default)]
    pub ppfd_per_sw: Option<f64>,
}

/// One mapped variable over the period: where its steps are and how they convert.
#[derive(Debug)]
struct Series {
    var: Variable,
    /// NetCDF variable name.
    name: String,
    /// Each file holding steps of the period: its path, the index within the period of its first
    /// step used, the index of that step in the file, and the number of steps used.
    sources: Vec<(PathBuf, usize, usize, usize)>,
    /// To the project's unit: `value · scale + offset`.
    scale: f64,
    offset: f64,
}

/// The weather of a rectangle of cells over the whole period, in the project's units (4 bytes per
/// value): what [`GriddedForcing::read_window`] reads and [`GriddedForcing::window_steps`] uses.
#[derive(Debug)]
pub struct Window {
    /// Latitude and longitude indices held.
    pub lat: Range<usize>,
    pub lon: Range<usize>,
    /// Per series, `[time][lat][lon]` within the window.
    values: Vec<Vec<f32>>,
}

impl Window {
    /// True when the window holds cell (`ilat`, `ilon`).
    pub fn holds(&self, ilat: usize, ilon: usize) -> bool {
        self.lat.contains(&ilat) && self.lon.contains(&ilon)
    }

    /// Bytes of weather held.
    pub fn bytes(&self) -> usize {
        self.values.iter().map(|v| v.len() * 4).sum()
    }
}

/// Gridded weather over a period: the files, their time axis and the variables' mapping. Values
/// are read by windows of cells ([`GriddedForcing::read_window`]), so memory follows the window,
/// not the grid.
#[derive(Debug)]
pub struct GriddedForcing {
    /// The grid.
    pub axes: GridAxes,
    /// Start of every step (UTC).
    pub times: Vec<LocalTime>,
    /// Step, minutes.
    pub step_minutes: u32,
    /// The calendar of the files.
    pub calendar: Calendar,
    series: Vec<Series>,
    plan: Plan,
}

/// One file's time axis.
pub(super) struct FileTimes {
    pub path: PathBuf,
    pub times: Vec<LocalTime>,
    pub time_dim: String,
    pub calendar: Calendar,
}

/// The time coordinate of a file: the 1-D variable named `time`, or with `standard_name = "time"`
/// or `axis = "T"`.
pub(super) fn read_times(reader: &NcIn) -> Result<FileTimes> {
    let path = reader.path();
    let name = {
        let vars = reader.variables();
        vars.iter()
            .find(|v| v.ndim() == 1 && v.name() == "time")
            .or_else(|| {
                vars.iter().find(|v| {
                    v.ndim() == 1
                        && (attr_text(v, "standard_name").as_deref() == Some("time")
                            || attr_text(v, "axis").as_deref() == Some("T"))
                })
            })
            .map(|v| v.name().to_string())
            .ok_or_else(|| {
                Error::msg(format!(
                    "{}: no time coordinate (a 1-D variable named `time`, or with \
                     standard_name \"time\" or axis \"T\")",
                    path.display()
                ))
            })?
    };
    let var = reader.var(&name)?;
    let time_dim = dim_names(var).remove(0);
    let units = attr_text(var, "units").ok_or_else(|| {
        Error::msg(format!(
            "{}, variable `{name}`: no units attribute (CF: \"hours since 2001-01-01 00:00\")",
            path.display()
        ))
    })?;
    let calendar = Calendar::parse(attr_text(var, "calendar").as_deref())
        .map_err(|e| Error::msg(format!("{}, variable `{name}`: {e}", path.display())))?;
    let units = TimeUnits::parse(&units, calendar)
        .map_err(|e| Error::msg(format!("{}, variable `{name}`: {e}", path.display())))?;
    let values = reader.read_values(&name)?;
    let mut times = Vec::with_capacity(values.len());
    for (i, v) in values.into_iter().enumerate() {
        let at = |why: String| {
            Error::msg(format!(
                "{}, variable `{name}`, index {i} (value {v}): {why}",
                path.display()
            ))
        };
        let d = units.decode(v).map_err(at)?;
        if d.second != 0 {
            return Err(at(format!(
                "{d} is not on a whole minute; isodisc's steps start on whole minutes"
            )));
        }
        let year = i32::try_from(d.year).unwrap_or(-1);
        let t = LocalTime::from_ymdhm(year, d.month, d.day, d.hour, d.minute).map_err(|e| {
            at(format!(
                "{d} ({} calendar) has no date on the standard calendar the model runs on ({e}); \
                 such steps are refused rather than moved",
                calendar.name()
            ))
        })?;
        times.push(t);
    }
    Ok(FileTimes {
        path: path.to_path_buf(),
        times,
        time_dim,
        calendar,
    })
}

impl GriddedForcing {
    /// Opens the files of `config` (relative to `base`), checks that they share one grid, one
    /// calendar and one regular time axis per variable, and reads the steps that start in
    /// `from`..`to` (inclusive start, exclusive end; None: the files' whole span).
    pub fn open(
        config: &NcForcingConfig,
        base: &Path,
        from: Option<LocalTime>,
        to: Option<LocalTime>,
    ) -> Result<GriddedForcing> {
        if config.files.is_empty() {
            return Err(Error::msg(
                "[forcing] files is empty: name the NetCDF files",
            ));
        }
        let mut axes: Option<GridAxes> = None;
        let mut files: Vec<(FileTimes, Vec<String>)> = Vec::new();
        for f in &config.files {
            let path = base.join(f);
            let reader = open(&path)?;
            let a = GridAxes::read(&reader)?;
            match &axes {
                None => axes = Some(a.clone()),
                Some(first) => first.check_same(&a, "forcing")?,
            }
            let times = read_times(&reader)?;
            let names = reader.var_names();
            // Every mapped variable's dimensions are (time, lat, lon).
            for (_, name) in mapped(&config.variables) {
                if let Some(var) = reader.variables().iter().find(|v| v.name == name) {
                    let dims = dim_names(var);
                    let want = [times.time_dim.as_str(), &a.lat_dim, &a.lon_dim];
                    if dims != want {
                        return Err(Error::msg(format!(
                            "{}, variable `{name}`: dimensions ({}) are not ({})",
                            path.display(),
                            dims.join(", "),
                            want.join(", ")
                        )));
                    }
                }
            }
            files.push((times, names));
        }
        let axes = axes.expect("at least one file");
        let calendar = files[0].0.calendar;
        if let Some((f, _)) = files.iter().find(|(f, _)| f.calendar != calendar) {
            return Err(Error::msg(format!(
                "{}: calendar {} differs from {} in {}",
                f.path.display(),
                f.calendar.name(),
                calendar.name(),
                files[0].0.path.display()
            )));
        }

        // The joined time axis of each variable: its files in time order.
        let mut axis: Option<(Variable, Vec<LocalTime>)> = None;
        let mut parts: Vec<(Variable, String, Vec<usize>)> = Vec::new();
        for (v, name) in mapped(&config.variables) {
            let mut holding: Vec<usize> = (0..files.len())
                .filter(|&k| files[k].1.iter().any(|n| n == name))
                .collect();
            if holding.is_empty() {
                return Err(Error::msg(format!(
                    "forcing.variables.{} = \"{name}\": no variable `{name}` in {}",
                    v.name(),
                    config
                        .files
                        .iter()
                        .map(|f| base.join(f).display().to_string())
                        .collect::<Vec<_>>()
                        .join(", ")
                )));
            }
            holding.sort_by_key(|&k| files[k].0.times.first().copied());
            let mut joined: Vec<LocalTime> = Vec::new();
            for &k in &holding {
                let ft = &files[k].0;
                for (i, t) in ft.times.iter().enumerate() {
                    if let Some(prev) = joined.last()
                        && t <= prev
                    {
                        return Err(Error::msg(format!(
                            "{}, variable `time`, index {i}: {t} is not after the step before \
                             it ({prev}){}: time must increase",
                            ft.path.display(),
                            if i == 0 {
                                ", the last of the previous file"
                            } else {
                                ""
                            }
                        )));
                    }
                    joined.push(*t);
                }
            }
            match &axis {
                None => axis = Some((v, joined)),
                Some((first, times)) if *times != joined => {
                    let span = |t: &[LocalTime]| match (t.first(), t.last()) {
                        (Some(a), Some(b)) => format!("{} steps from {a} to {b}", t.len()),
                        _ => "no steps".into(),
                    };
                    return Err(Error::msg(format!(
                        "forcing.variables.{} (`{name}`) covers {}, but forcing.variables.{} \
                         covers {}: every variable needs the same steps",
                        v.name(),
                        span(&joined),
                        first.name(),
                        span(times)
                    )));
                }
                Some(_) => {}
            }
            parts.push((v, name.to_string(), holding));
        }
        let (_, times) = axis.ok_or_else(|| Error::msg("[forcing] variables maps nothing"))?;
        if times.len() < 2 {
            return Err(Error::msg(
                "the forcing files hold fewer than two steps: the step length is unknown",
            ));
        }
        let step = times[1].minutes() - times[0].minutes();
        for i in 2..times.len() {
            let d = times[i].minutes() - times[i - 1].minutes();
            if d != step {
                let (path, local) = locate(&files, &parts[0].2, i);
                return Err(Error::msg(format!(
                    "{}, variable `time`, index {local}: {} follows {} after {d} minutes, but \
                     the first step is {step} minutes{}: the steps must be regular",
                    path.display(),
                    times[i],
                    times[i - 1],
                    if calendar == Calendar::NoLeap {
                        " (a noleap calendar has no 29 February)"
                    } else {
                        ""
                    }
                )));
            }
        }
        let step_minutes = u32::try_from(step)
            .ok()
            .filter(|s| (1..=1440).contains(s))
            .ok_or_else(|| {
                Error::msg(format!(
                    "the forcing step is {step} minutes; isodisc needs 1 to 1440"
                ))
            })?;

        // Units: the grid file's, else the attribute, as the CSV reader's table names them.
        let mut units = PerVariable::<String>::default();
        for (v, name, holding) in &parts {
            let reader = open(&files[holding[0]].0.path)?;
            let unit = resolve_unit(&reader, *v, name, config.units.get(*v), "grid file")?;
            *units.slot(*v) = Some(unit);
        }
        let plan = ForcingConfig {
            path: base.join(&config.files[0]),
            columns: config.variables.clone(),
            units,
            step_minutes: Some(step_minutes),
            ppfd_per_sw: config.ppfd_per_sw,
            ..Default::default()
        }
        .plan()
        .map_err(|e| Error::msg(format!("grid [forcing]: {e}")))?;

        let t0 = from.map_or(0, |f| times.partition_point(|t| *t < f));
        let t1 = to.map_or(times.len(), |t| times.partition_point(|x| *x < t));
        if t0 >= t1 {
            return Err(Error::msg(format!(
                "no forcing step in the period asked for: the files cover {} to {}",
                times[0],
                times[times.len() - 1]
            )));
        }
        let mut series = Vec::new();
        for (v, name, holding) in parts {
            let Some(m) = plan.mappings[v.index()].as_ref() else {
                continue; // a humidity variable not in use
            };
            let mut sources = Vec::new();
            let mut start = 0;
            for k in holding {
                let ft = &files[k].0;
                let n = ft.times.len();
                let (lo, hi) = (start.max(t0), (start + n).min(t1));
                if lo < hi {
                    sources.push((ft.path.clone(), lo - t0, lo - start, hi - lo));
                }
                start += n;
            }
            series.push(Series {
                var: v,
                name,
                sources,
                scale: m.scale,
                offset: m.offset,
            });
        }
        Ok(GriddedForcing {
            axes,
            times: times[t0..t1].to_vec(),
            step_minutes,
            calendar,
            series,
            plan,
        })
    }

    /// Bytes a window of `cells` cells holds (every variable, every step, 4 bytes a value).
    pub fn window_bytes(&self, cells: usize) -> usize {
        cells * self.times.len() * self.series.len() * 4
    }

    /// Reads the weather of the cells `lat` × `lon` over the whole period: one hyperslab per
    /// variable and file, converted to the project's units.
    pub fn read_window(&self, lat: Range<usize>, lon: Range<usize>) -> Result<Window> {
        let ncell = lat.len() * lon.len();
        let mut values = Vec::with_capacity(self.series.len());
        for s in &self.series {
            let mut out = vec![f32::NAN; self.times.len() * ncell];
            for (path, first, local, count) in &s.sources {
                let reader = open(path)?;
                let mut dst = out[first * ncell..(first + count) * ncell].iter_mut();
                reader.read_slab_with(
                    &s.name,
                    &[
                        Some(*local..local + count),
                        Some(lat.clone()),
                        Some(lon.clone()),
                    ],
                    |x| {
                        if let Some(d) = dst.next() {
                            *d = (x * s.scale + s.offset) as f32;
                        }
                    },
                )?;
            }
            values.push(out);
        }
        Ok(Window { lat, lon, values })
    }

    /// The weather variables read, with their NetCDF names.
    pub fn variables(&self) -> Vec<(Variable, &str)> {
        self.series
            .iter()
            .map(|s| (s.var, s.name.as_str()))
            .collect()
    }

    /// The steps of one cell in the project's units, as the CSV reader would yield them from a
    /// file of these values: VPD from the humidity variable, PPFD from shortwave (or the
    /// reverse), pressure from `elevation_m` where none is given, night radiation offsets set to
    /// 0. A missing value or one outside its variable's valid range is an error naming the file,
    /// variable and indices.
    pub fn cell_steps(
        &self,
        ilat: usize,
        ilon: usize,
        elevation_m: f64,
    ) -> Result<Vec<ForcingStep>> {
        let window = self.read_window(ilat..ilat + 1, ilon..ilon + 1)?;
        self.window_steps(&window, ilat, ilon, elevation_m)
    }

    /// [`GriddedForcing::cell_steps`] from a window that holds the cell.
    pub fn window_steps(
        &self,
        window: &Window,
        ilat: usize,
        ilon: usize,
        elevation_m: f64,
    ) -> Result<Vec<ForcingStep>> {
        assert!(window.holds(ilat, ilon), "the window holds the cell");
        let ncell = window.lat.len() * window.lon.len();
        let cell = (ilat - window.lat.start) * window.lon.len() + (ilon - window.lon.start);
        let pressure_default = pressure_from_elevation_kpa(elevation_m);
        let mut out = Vec::with_capacity(self.times.len());
        let mut values = [f64::NAN; N_VARIABLES];
        for (t, time) in self.times.iter().enumerate() {
            for (s, series) in self.series.iter().zip(&window.values) {
                let v = f64::from(series[t * ncell + cell]);
                values[s.var.index()] = checked(&self.plan, s.var, v).map_err(|why| {
                    let (path, local) = self.source(s, t);
                    Error::msg(format!(
                        "{}, variable `{}`, time index {local} ({time}), lat index {ilat} ({}°), \
                         lon index {ilon} ({}°): {why}; gridded weather must be complete over \
                         cells with vegetation",
                        path.display(),
                        s.name,
                        self.axes.lat[ilat],
                        self.axes.lon[ilon]
                    ))
                })?;
            }
            out.push(assemble(
                &self.plan,
                &values,
                *time,
                t as u64 + 1,
                pressure_default,
            ));
        }
        Ok(out)
    }

    /// The file and index within it of step `t` of a series.
    fn source<'a>(&self, s: &'a Series, t: usize) -> (&'a Path, usize) {
        let k = s
            .sources
            .partition_point(|(_, first, ..)| *first <= t)
            .max(1)
            - 1;
        let (path, first, local, _) = &s.sources[k];
        (path, local + (t - first))
    }
}

/// A value in the project's unit checked against its variable's valid range, as the CSV reader
/// checks it: night-time radiation offsets down to −50 W m⁻² are 0; the error says why.
pub(super) fn checked(plan: &Plan, var: Variable, v: f64) -> std::result::Result<f64, String> {
    let k = plan.ppfd_per_sw;
    let (lo, hi) = var.valid_range();
    let value = match var {
        Variable::Sw if (-50.0..0.0).contains(&v) => 0.0,
        Variable::Ppfd if (-50.0 * k..0.0).contains(&v) => 0.0,
        _ => v,
    };
    if (lo..=hi).contains(&value) {
        Ok(value)
    } else if value.is_nan() {
        Err("no value (a fill or missing value)".into())
    } else {
        Err(format!(
            "{} = {value:.3} {} is outside its valid range {lo}…{hi} {}",
            var.name(),
            var.project_unit(),
            var.project_unit()
        ))
    }
}

/// One step from checked values (`values[variable index]`, project units), as the CSV reader
/// builds it: VPD from the humidity variable, PPFD from shortwave (or the reverse), pressure from
/// the elevation (`pressure_default`, kPa) where none is mapped, precipitation 0 where none is.
pub(super) fn assemble(
    plan: &Plan,
    values: &[f64; N_VARIABLES],
    time: LocalTime,
    line: u64,
    pressure_default: f64,
) -> ForcingStep {
    let k = plan.ppfd_per_sw;
    let get = |v: Variable| values[v.index()];
    let mapped = |v: Variable| plan.mappings[v.index()].is_some();
    let t_air_c = get(Variable::TAir);
    let pressure_kpa = if mapped(Variable::Pressure) {
        get(Variable::Pressure)
    } else {
        pressure_default
    };
    let vpd_kpa = vpd_from_humidity_kpa(plan.humidity, t_air_c, get(plan.humidity), pressure_kpa);
    let (sw_w_m2, ppfd_umol_m2_s) = match (mapped(Variable::Sw), mapped(Variable::Ppfd)) {
        (true, true) => (get(Variable::Sw), get(Variable::Ppfd)),
        (true, false) => (get(Variable::Sw), get(Variable::Sw) * k),
        _ => (get(Variable::Ppfd) / k, get(Variable::Ppfd)),
    };
    let optional = |v: Variable| mapped(v).then(|| get(v));
    ForcingStep {
        time,
        line,
        t_air_c,
        vpd_kpa,
        sw_w_m2,
        ppfd_umol_m2_s,
        pressure_kpa,
        precip_mm: if mapped(Variable::Precip) {
            get(Variable::Precip)
        } else {
            0.0
        },
        co2_umol_mol: optional(Variable::Co2),
        swc_m3_m3: optional(Variable::Swc),
        lai: optional(Variable::Lai),
        d13c_co2_permil: optional(Variable::D13cCo2),
        wind_m_s: optional(Variable::Wind),
        filled: false,
        missing: false,
    }
}

/// A variable's unit as the forcing unit table names it: `override_unit` (the `units` table of
/// the settings) or else its `units` attribute; an error names the file, variable and unit when
/// the table has no conversion for it.
pub(super) fn resolve_unit(
    reader: &NcIn,
    v: Variable,
    name: &str,
    override_unit: Option<&String>,
    settings_file: &str,
) -> Result<String> {
    if let Some(u) = override_unit {
        return Ok(u.clone());
    }
    let path = reader.path();
    let var = reader.var(name)?;
    let u = attr_text(var, "units").ok_or_else(|| {
        Error::msg(format!(
            "{}, variable `{name}`: no units attribute; set forcing.units.{} in the {settings_file}",
            path.display(),
            v.name()
        ))
    })?;
    let table = table_unit(v, &u);
    if !v.accepted_units().iter().any(|(n, ..)| *n == table) {
        let list: Vec<String> = v
            .accepted_units()
            .iter()
            .map(|(n, ..)| format!("\"{n}\""))
            .collect();
        return Err(Error::msg(format!(
            "{}, variable `{name}`: units \"{u}\" cannot be converted to {} ({}); isodisc knows {}",
            path.display(),
            v.name(),
            v.project_unit(),
            list.join(", ")
        )));
    }
    Ok(table)
}

/// The mapped (variable, NetCDF name) pairs.
pub(super) fn mapped(variables: &PerVariable<String>) -> Vec<(Variable, &str)> {
    Variable::ALL
        .into_iter()
        .filter_map(|v| variables.get(v).map(|n| (v, n.trim())))
        .filter(|(_, n)| !n.is_empty())
        .collect()
}

/// The file and index within it of step `i` of a variable joined from `holding` files.
fn locate<'a>(
    files: &'a [(FileTimes, Vec<String>)],
    holding: &[usize],
    i: usize,
) -> (&'a Path, usize) {
    let mut start = 0;
    for &k in holding {
        let n = files[k].0.times.len();
        if i < start + n {
            return (&files[k].0.path, i - start);
        }
        start += n;
    }
    (&files[holding[0]].0.path, i)
}
