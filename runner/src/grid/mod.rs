//! A grid of sites: gridded NetCDF weather, vegetation, soil and atmosphere as constants or maps
//! on the weather's grid (see docs/grid.md). Every cell with vegetation becomes a site file text
//! — the one `isodisc grid --cell … --export` writes — validated by [`Site::from_text`] and run by
//! [`simulate`], so a cell runs exactly the model `isodisc run` runs. Cells are run by blocks of
//! [`BLOCK_CELLS`] land cells; each finished block is one file, which makes interrupted runs
//! resumable and shards mergeable.

pub mod output;

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::ops::Range;
use std::path::{Path, PathBuf};

use toml::{Table, Value};

use crate::error::{Context, Error, Result};
use crate::forcing::{LocalTime, Variable};
use crate::netcdf_in::forcing::{NcForcingConfig, Window};
use crate::netcdf_in::{GriddedForcing, read_map};
use crate::simulate::{NoSink, period_col, simulate};
use crate::site::Site;

/// Land cells per block: the unit of resuming and sharding.
pub const BLOCK_CELLS: usize = 32;

/// Weather a grid run holds at once, bytes (common practice: a fraction of a workstation's
/// memory; 256 MiB keeps a run's peak well under 1 GB whatever the grid's size).
pub const WINDOW_BYTES: usize = 256 << 20;

/// A window of weather to read (latitude and longitude index ranges) and the blocks it serves.
pub type WindowPlan = (Range<usize>, Range<usize>, Vec<usize>);

/// The monthly columns of a cell's run kept in a block file: what
/// [`crate::priors_grid::MonthAggregate`] needs for the standard gridded priors.
pub const GRID_FIELDS: [&str; 10] = [
    "gpp",
    "gpp_c4",
    "discrimination",
    "discrimination_c3",
    "discrimination_c4",
    "d13c_assimilate",
    "reco",
    "d13c_respiration",
    "disequilibrium",
    "complete",
];

/// A value of the grid file: a constant (any TOML value) or a map `{ file, variable }` read onto
/// the grid.
#[derive(Debug, Clone)]
enum Setting {
    Constant(Value),
    Map {
        file: PathBuf,
        variable: String,
        values: Vec<f64>,
    },
}

/// A validated grid file with its weather read.
#[derive(Debug)]
pub struct Grid {
    /// The grid file.
    pub path: PathBuf,
    /// Its text's FNV-1a hash: the identity of a run, its shards and resumed parts.
    pub hash: String,
    /// The weather.
    pub forcing: GriddedForcing,
    elevation: Setting,
    /// `[vegetation.c3]`, `[vegetation.c4]`, `[soil]`, `[atmosphere]`, `[pools]`: key → setting.
    sections: Vec<(String, Vec<(String, Setting)>)>,
    /// Cell indices (`[lat][lon]` order) with vegetation.
    pub land: Vec<usize>,
    /// Months of the period, (year, month).
    pub months: Vec<(i32, u32)>,
    /// The atmospheric history file (absolute), if any.
    history: Option<PathBuf>,
    /// Period asked for in the grid file, as written.
    pub period: (Option<String>, Option<String>),
}

fn grid_err(path: &Path, message: String) -> Error {
    Error::msg(format!("{}: {message}", path.display()))
}

/// `{ file = "…", variable = "…" }`.
fn as_map_ref(v: &Value) -> Option<(PathBuf, String)> {
    let t = v.as_table()?;
    if t.len() != 2 {
        return None;
    }
    Some((
        PathBuf::from(t.get("file")?.as_str()?),
        t.get("variable")?.as_str()?.to_string(),
    ))
}

impl Grid {
    /// Reads and checks a grid file, its weather and its maps. `from`/`to` (inclusive start,
    /// exclusive end) override the file's `[grid]` period.
    pub fn load(path: &Path, from: Option<LocalTime>, to: Option<LocalTime>) -> Result<Grid> {
        let text = std::fs::read_to_string(path).map_err(|e| {
            Error::msg(format!("cannot read the grid file {}: {e}", path.display()))
        })?;
        let table: Table = text
            .parse()
            .map_err(|e: toml::de::Error| grid_err(path, e.to_string()))?;
        let base = path.parent().unwrap_or(Path::new(".")).to_path_buf();
        for key in table.keys() {
            if ![
                "grid",
                "forcing",
                "vegetation",
                "soil",
                "atmosphere",
                "pools",
            ]
            .contains(&key.as_str())
            {
                return Err(grid_err(
                    path,
                    format!(
                        "unknown section [{key}]; a grid file has [grid], [forcing], \
                         [vegetation.c3], [vegetation.c4], [soil], [atmosphere] and [pools]"
                    ),
                ));
            }
        }
        let empty = Table::new();
        let grid = match table.get("grid") {
            Some(Value::Table(t)) => t,
            None => &empty,
            Some(_) => return Err(grid_err(path, "[grid] must be a table".into())),
        };
        for key in grid.keys() {
            if !["from", "to", "elevation_m"].contains(&key.as_str()) {
                return Err(grid_err(
                    path,
                    format!("[grid] {key}: unknown key (from, to, elevation_m)"),
                ));
            }
        }
        let date = |key: &str| -> Result<Option<(String, LocalTime)>> {
            match grid.get(key) {
                None => Ok(None),
                Some(Value::String(s)) => LocalTime::parse_date(s)
                    .map(|t| Some((s.clone(), t)))
                    .map_err(|e| grid_err(path, format!("[grid] {key} = \"{s}\": {e}"))),
                Some(v) => Err(grid_err(
                    path,
                    format!("[grid] {key} = {v}: expected a date \"YYYY-MM-DD\""),
                )),
            }
        };
        let file_from = date("from")?;
        let file_to = date("to")?;
        let from = from.or(file_from.as_ref().map(|f| f.1));
        let to = to.or(file_to.as_ref().map(|t| t.1.plus_minutes(1440)));
        let forcing_cfg: NcForcingConfig = table
            .get("forcing")
            .ok_or_else(|| grid_err(path, "[forcing] is required (the NetCDF weather)".into()))?
            .clone()
            .try_into()
            .map_err(|e: toml::de::Error| grid_err(path, format!("[forcing]: {e}")))?;
        let forcing = GriddedForcing::open(&forcing_cfg, &base, from, to)
            .with_context(|| format!("grid file {}", path.display()))?;

        let mut maps: BTreeMap<(PathBuf, String), Vec<f64>> = BTreeMap::new();
        let mut setting = |v: &Value| -> Result<Setting> {
            let Some((file, variable)) = as_map_ref(v) else {
                return Ok(Setting::Constant(v.clone()));
            };
            let full = base.join(&file);
            let key = (full.clone(), variable.clone());
            if !maps.contains_key(&key) {
                let values = read_map(&full, &variable, &forcing.axes)?;
                maps.insert(key.clone(), values);
            }
            Ok(Setting::Map {
                file: full,
                variable,
                values: maps[&key].clone(),
            })
        };
        let elevation = match grid.get("elevation_m") {
            Some(v) => setting(v)?,
            None => Setting::Constant(Value::Float(0.0)),
        };
        let mut sections = Vec::new();
        let mut push = |name: String, t: &Table, sections: &mut Vec<_>| -> Result<()> {
            let mut keys = Vec::new();
            for (k, v) in t {
                keys.push((k.clone(), setting(v)?));
            }
            sections.push((name, keys));
            Ok(())
        };
        let veg = table
            .get("vegetation")
            .and_then(Value::as_table)
            .ok_or_else(|| {
                grid_err(
                    path,
                    "[vegetation.c3] or [vegetation.c4] is required".into(),
                )
            })?;
        for (k, v) in veg {
            let t = v
                .as_table()
                .filter(|_| k == "c3" || k == "c4")
                .ok_or_else(|| {
                    grid_err(
                        path,
                        format!("[vegetation] {k}: expected [vegetation.c3] or [vegetation.c4]"),
                    )
                })?;
            if !t.contains_key("cover") {
                return Err(grid_err(
                    path,
                    format!("[vegetation.{k}] needs cover (a fraction or a map)"),
                ));
            }
            push(format!("vegetation.{k}"), t, &mut sections)?;
        }
        let mut history = None;
        for name in ["soil", "atmosphere", "pools"] {
            match table.get(name) {
                Some(Value::Table(t)) => {
                    let mut t = t.clone();
                    if name == "atmosphere"
                        && let Some(h) = t.remove("history")
                    {
                        let h = h.as_str().ok_or_else(|| {
                            grid_err(path, "[atmosphere] history must be a file name".into())
                        })?;
                        history = Some(std::path::absolute(base.join(h)).unwrap_or(base.join(h)));
                    }
                    push(name.to_string(), &t, &mut sections)?;
                }
                Some(_) => return Err(grid_err(path, format!("[{name}] must be a table"))),
                None if name == "pools" => {}
                None => return Err(grid_err(path, format!("[{name}] is required"))),
            }
        }

        // Land: cells where the covers add up to more than 0 (a missing cover is 0: sea).
        let ncell = forcing.axes.cells();
        let cover_of = |sections: &Vec<(String, Vec<(String, Setting)>)>, cell: usize| -> f64 {
            sections
                .iter()
                .filter(|(n, _)| n.starts_with("vegetation."))
                .map(|(_, keys)| {
                    keys.iter()
                        .find(|(k, _)| k == "cover")
                        .map_or(0.0, |(_, s)| cover_value(s, cell))
                })
                .sum()
        };
        let land: Vec<usize> = (0..ncell)
            .filter(|&c| cover_of(&sections, c) > 0.0)
            .collect();
        if land.is_empty() {
            return Err(grid_err(
                path,
                "no cell has vegetation (every cover is 0 or missing)".into(),
            ));
        }
        let mut months: Vec<(i32, u32)> = forcing
            .times
            .iter()
            .map(|t| (t.year(), t.month()))
            .collect();
        months.dedup();
        let hash = crate::output::fnv1a64(text.as_bytes());
        Ok(Grid {
            path: path.to_path_buf(),
            hash,
            forcing,
            elevation,
            sections,
            land,
            months,
            history,
            period: (file_from.map(|f| f.0), file_to.map(|t| t.0)),
        })
    }

    /// (lat index, lon index) of a cell.
    pub fn position(&self, cell: usize) -> (usize, usize) {
        let nlon = self.forcing.axes.lon.len();
        (cell / nlon, cell % nlon)
    }

    /// The cell nearest to a latitude and longitude; an error beyond the grid's edge.
    pub fn nearest(&self, lat: f64, lon: f64) -> Result<usize> {
        let a = &self.forcing.axes;
        let pick = |axis: &[f64], x: f64, what: &str| -> Result<usize> {
            let (i, d) = axis
                .iter()
                .enumerate()
                .map(|(i, c)| (i, (c - x).abs()))
                .fold((0, f64::INFINITY), |b, c| if c.1 < b.1 { c } else { b });
            let half = if axis.len() > 1 {
                (axis[1] - axis[0]).abs() / 2.0
            } else {
                0.5
            };
            if d > half + 1e-9 {
                return Err(Error::msg(format!(
                    "--cell {what} {x}: outside the grid ({}…{}°)",
                    axis[0],
                    axis[axis.len() - 1]
                )));
            }
            Ok(i)
        };
        let cell = pick(&a.lat, lat, "latitude")? * a.lon.len() + pick(&a.lon, lon, "longitude")?;
        if !self.land.contains(&cell) {
            let (i, j) = self.position(cell);
            return Err(Error::msg(format!(
                "--cell {lat},{lon}: the cell at {}°, {}° (lat index {i}, lon index {j}) has no \
                 vegetation",
                a.lat[i], a.lon[j]
            )));
        }
        Ok(cell)
    }

    /// The columns of a cell's weather CSV: the project's variables the grid reads, each in the
    /// project's default unit.
    fn csv_variables(&self) -> Vec<Variable> {
        let read: Vec<Variable> = self.forcing.variables().iter().map(|(v, _)| *v).collect();
        let mut out = vec![
            Variable::TAir,
            Variable::Vpd,
            Variable::Sw,
            Variable::Ppfd,
            Variable::Pressure,
            Variable::Precip,
        ];
        for v in [
            Variable::Co2,
            Variable::Swc,
            Variable::Lai,
            Variable::D13cCo2,
            Variable::Wind,
        ] {
            if read.contains(&v) {
                out.push(v);
            }
        }
        out
    }

    /// The site file of a cell, weather from `weather` and the history from `history`.
    pub fn site_text(&self, cell: usize, weather: &str, history: Option<&str>) -> Result<String> {
        let (i, j) = self.position(cell);
        let a = &self.forcing.axes;
        let at = |file: &Path, variable: &str, what: &str| {
            Error::msg(format!(
                "{}, variable `{variable}`, lat index {i} ({}°), lon index {j} ({}°): no value \
                 for {what} at a cell with vegetation",
                file.display(),
                a.lat[i],
                a.lon[j]
            ))
        };
        let value = |s: &Setting, what: &str| -> Result<Value> {
            match s {
                Setting::Constant(v) => Ok(v.clone()),
                Setting::Map {
                    file,
                    variable,
                    values,
                } => {
                    let x = values[cell];
                    if x.is_nan() {
                        return Err(at(file, variable, what));
                    }
                    Ok(Value::Float(x))
                }
            }
        };
        let mut site = Table::new();
        site.insert("name".into(), Value::String(format!("cell {i},{j}")));
        site.insert("latitude".into(), Value::Float(a.lat[i]));
        site.insert("longitude".into(), Value::Float(a.lon[j]));
        site.insert(
            "elevation_m".into(),
            value(&self.elevation, "[grid] elevation_m")?,
        );
        // CF times are UTC.
        site.insert("utc_offset_h".into(), Value::Float(0.0));
        let mut root = Table::new();
        root.insert("site".into(), Value::Table(site));
        let mut vegetation = Table::new();
        for (name, keys) in &self.sections {
            let mut t = Table::new();
            let veg = name.strip_prefix("vegetation.");
            if veg.is_some() {
                let cover = keys.iter().find(|(k, _)| k == "cover").map(|(_, s)| s);
                if cover.is_none_or(|s| cover_value(s, cell) <= 0.0) {
                    continue;
                }
            }
            for (k, s) in keys {
                let v = if k == "cover" {
                    Value::Float(cover_value(s, cell))
                } else {
                    value(s, &format!("[{name}] {k}"))?
                };
                t.insert(k.clone(), v);
            }
            if name == "atmosphere"
                && let Some(h) = history
            {
                t.insert("history".into(), Value::String(h.to_string()));
            }
            match veg {
                Some(p) => {
                    vegetation.insert(p.to_string(), Value::Table(t));
                }
                None => {
                    root.insert(name.clone(), Value::Table(t));
                }
            }
        }
        root.insert("vegetation".into(), Value::Table(vegetation));
        let mut columns = Table::new();
        for v in self.csv_variables() {
            columns.insert(v.name().into(), Value::String(v.name().into()));
        }
        let mut forcing = Table::new();
        forcing.insert("path".into(), Value::String(weather.into()));
        forcing.insert(
            "step_minutes".into(),
            Value::Integer(i64::from(self.forcing.step_minutes)),
        );
        forcing.insert("columns".into(), Value::Table(columns));
        root.insert("forcing".into(), Value::Table(forcing));
        let mut text = format!(
            "# Cell lat index {i}, lon index {j} of {}, written by isodisc grid --export.\n",
            self.path.display()
        );
        text.push_str(&toml::to_string(&root).map_err(|e| Error::msg(e.to_string()))?);
        Ok(text)
    }

    /// The elevation of a cell, m.
    fn elevation_m(&self, cell: usize) -> f64 {
        match &self.elevation {
            Setting::Constant(v) => v
                .as_float()
                .or(v.as_integer().map(|i| i as f64))
                .unwrap_or(0.0),
            Setting::Map { values, .. } => values[cell],
        }
    }

    /// Runs one cell: its monthly values, `[field][month]` in the order of [`GRID_FIELDS`] and
    /// [`Grid::months`] (NaN: no value).
    pub fn run_cell(&self, cell: usize) -> Result<Vec<f64>> {
        let (i, j) = self.position(cell);
        let window = self.forcing.read_window(i..i + 1, j..j + 1)?;
        self.run_cell_in(cell, &window)
    }

    /// [`Grid::run_cell`] with the weather from a window that holds the cell.
    pub fn run_cell_in(&self, cell: usize, window: &Window) -> Result<Vec<f64>> {
        let (i, j) = self.position(cell);
        let history = self.history.as_ref().map(|h| h.display().to_string());
        let text = self.site_text(cell, "weather.csv", history.as_deref())?;
        let virtual_path = self.path.with_file_name(format!("cell_{i}_{j}.toml"));
        let site = Site::from_text(&virtual_path, text)
            .with_context(|| format!("grid cell lat index {i}, lon index {j}"))?;
        let steps = self
            .forcing
            .window_steps(window, i, j, self.elevation_m(cell))?;
        let sim = simulate(
            &site,
            steps.into_iter().map(Ok),
            self.forcing.step_minutes,
            &mut NoSink,
        )
        .with_context(|| format!("grid cell lat index {i}, lon index {j}"))?;
        let nm = self.months.len();
        let mut out = vec![f64::NAN; GRID_FIELDS.len() * nm];
        for row in &sim.periods[1] {
            let Some(m) = self.month_index(&row.key) else {
                continue;
            };
            for (f, name) in GRID_FIELDS.iter().enumerate() {
                out[f * nm + m] = row.values[period_col(name)];
            }
        }
        Ok(out)
    }

    /// The windows of weather that the blocks `blocks` (each a list of land cells, in order) are
    /// run from, each with the indices of the blocks it serves: whole rows of the grid, as many
    /// as [`WINDOW_BYTES`] holds (at least the rows of one block), or, where one block's rows do
    /// not fit, the rectangle around that block's cells. Memory so follows the window, not the
    /// grid.
    pub fn windows(&self, blocks: &[(usize, &[usize])]) -> Vec<WindowPlan> {
        let nlon = self.forcing.axes.lon.len();
        let nlat = self.forcing.axes.lat.len();
        let row_bytes = self.forcing.window_bytes(nlon).max(1);
        let budget_rows = WINDOW_BYTES / row_bytes;
        let mut out: Vec<WindowPlan> = Vec::new();
        for (b, cells) in blocks {
            let rows = |c: &usize| self.position(*c).0;
            let r0 = cells.iter().map(rows).min().unwrap_or(0);
            let r1 = cells.iter().map(rows).max().unwrap_or(0) + 1;
            let c0 = cells.iter().map(|c| self.position(*c).1).min().unwrap_or(0);
            let c1 = cells.iter().map(|c| self.position(*c).1).max().unwrap_or(0) + 1;
            if let Some((lat, lon, list)) = out.last_mut()
                && lat.start <= r0
                && r1 <= lat.end
                && lon.start <= c0
                && c1 <= lon.end
            {
                list.push(*b);
                continue;
            }
            if budget_rows >= r1 - r0 {
                let end = (r0 + budget_rows).min(nlat);
                out.push((r0..end, 0..nlon, vec![*b]));
            } else {
                out.push((r0..r1, c0..c1, vec![*b]));
            }
        }
        out
    }

    fn month_index(&self, key: &str) -> Option<usize> {
        let (y, m) = key.split_once('-')?;
        let ym = (y.parse().ok()?, m.parse().ok()?);
        self.months.iter().position(|x| *x == ym)
    }

    /// Writes a cell's site file, weather CSV (and a copy of the history) into `dir`.
    pub fn export_cell(&self, cell: usize, dir: &Path) -> Result<Vec<PathBuf>> {
        let (i, j) = self.position(cell);
        std::fs::create_dir_all(dir).with_context(|| format!("cannot create {}", dir.display()))?;
        let mut written = Vec::new();
        let history = match &self.history {
            Some(h) => {
                let to = dir.join("history.csv");
                let bytes = std::fs::read(h)
                    .with_context(|| format!("cannot read the history {}", h.display()))?;
                crate::output::write_atomic(&to, &bytes)?;
                written.push(to);
                Some("history.csv")
            }
            None => None,
        };
        let site = dir.join("site.toml");
        crate::output::write_atomic(
            &site,
            self.site_text(cell, "weather.csv", history)?.as_bytes(),
        )?;
        written.push(site);
        let vars = self.csv_variables();
        let steps = self.forcing.cell_steps(i, j, self.elevation_m(cell))?;
        let mut csv = String::with_capacity(steps.len() * 80);
        csv.push_str("time");
        for v in &vars {
            csv.push(',');
            csv.push_str(v.name());
        }
        csv.push('\n');
        for s in &steps {
            write!(csv, "{}", s.time).expect("string");
            for v in &vars {
                // Shortest text that reads back as the same f64.
                let x = match v {
                    Variable::TAir => s.t_air_c,
                    Variable::Vpd => s.vpd_kpa,
                    Variable::Sw => s.sw_w_m2,
                    Variable::Ppfd => s.ppfd_umol_m2_s,
                    Variable::Pressure => s.pressure_kpa,
                    Variable::Precip => s.precip_mm,
                    Variable::Co2 => s.co2_umol_mol.unwrap_or(f64::NAN),
                    Variable::Swc => s.swc_m3_m3.unwrap_or(f64::NAN),
                    Variable::Lai => s.lai.unwrap_or(f64::NAN),
                    Variable::D13cCo2 => s.d13c_co2_permil.unwrap_or(f64::NAN),
                    _ => s.wind_m_s.unwrap_or(f64::NAN),
                };
                write!(csv, ",{x}").expect("string");
            }
            csv.push('\n');
        }
        let weather = dir.join("weather.csv");
        crate::output::write_atomic(&weather, csv.as_bytes())?;
        written.push(weather);
        Ok(written)
    }
}

/// A cover at a cell: NaN (a fill over sea) is 0.
fn cover_value(s: &Setting, cell: usize) -> f64 {
    let x = match s {
        Setting::Constant(v) => v
            .as_float()
            .or(v.as_integer().map(|i| i as f64))
            .unwrap_or(0.0),
        Setting::Map { values, .. } => values[cell],
    };
    if x.is_nan() { 0.0 } else { x }
}
