//! What a grid run writes: one file per finished block of cells (`blocks/NNNNNN.bin`), the run's
//! identity (`grid.json`), and, when every block is done, `priors_grid.nc` — CF-1.8 monthly
//! fields on the grid. The NetCDF file depends only on the block values and the grid, so shards
//! merged give the same bytes as one run.

use std::path::{Path, PathBuf};

use netcdf3::{DataSet, FileWriter, NC_FILL_F64, Version};

use super::{BLOCK_CELLS, GRID_FIELDS, Grid};

/// What the output of a grid run depends on besides the cells' values: kept in `grid.json` so
/// that `isodisc merge` needs neither the grid file nor its weather.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    /// FNV-1a hash of the grid file's text.
    pub hash: String,
    /// The grid file's name, for the title.
    pub grid_file: String,
    pub lat: Vec<f64>,
    pub lon: Vec<f64>,
    pub months: Vec<(i32, u32)>,
    /// Cells with vegetation, `[lat][lon]` index.
    pub land: Vec<usize>,
}

impl Layout {
    /// The layout of a loaded grid.
    pub fn of(grid: &Grid) -> Layout {
        Layout {
            hash: grid.hash.clone(),
            grid_file: grid
                .path
                .file_name()
                .map_or(String::new(), |n| n.to_string_lossy().into_owned()),
            lat: grid.forcing.axes.lat.clone(),
            lon: grid.forcing.axes.lon.clone(),
            months: grid.months.clone(),
            land: grid.land.clone(),
        }
    }

    /// As JSON; coordinates also as their bit patterns, so that reading them back gives the same
    /// f64 whatever the JSON parser's rounding.
    pub fn to_json(&self) -> serde_json::Value {
        let bits = |v: &[f64]| {
            v.iter()
                .map(|x| format!("{:016x}", x.to_bits()))
                .collect::<Vec<_>>()
        };
        serde_json::json!({
            "grid_hash": self.hash,
            "grid_file": self.grid_file,
            "lat": self.lat,
            "lon": self.lon,
            "lat_bits": bits(&self.lat),
            "lon_bits": bits(&self.lon),
            "months": self.months.iter().map(|(y, m)| format!("{y:04}-{m:02}")).collect::<Vec<_>>(),
            "land_cells": self.land,
            "block_cells": BLOCK_CELLS,
            "fields": GRID_FIELDS.iter().map(|f| f.0).collect::<Vec<_>>(),
        })
    }

    /// Reads the layout back from `grid.json`'s value.
    pub fn from_json(v: &serde_json::Value) -> Option<Layout> {
        let bits = |k: &str| -> Option<Vec<f64>> {
            v[k].as_array()?
                .iter()
                .map(|x| {
                    u64::from_str_radix(x.as_str()?, 16)
                        .ok()
                        .map(f64::from_bits)
                })
                .collect()
        };
        let months = v["months"]
            .as_array()?
            .iter()
            .map(|m| {
                let (y, mo) = m.as_str()?.split_once('-')?;
                Some((y.parse().ok()?, mo.parse().ok()?))
            })
            .collect::<Option<Vec<_>>>()?;
        if v["block_cells"].as_u64()? != BLOCK_CELLS as u64 {
            return None;
        }
        Some(Layout {
            hash: v["grid_hash"].as_str()?.to_string(),
            grid_file: v["grid_file"].as_str()?.to_string(),
            lat: bits("lat_bits")?,
            lon: bits("lon_bits")?,
            months,
            land: v["land_cells"]
                .as_array()?
                .iter()
                .map(|c| c.as_u64().map(|c| c as usize))
                .collect::<Option<Vec<_>>>()?,
        })
    }

    /// The title of `priors_grid.nc`.
    pub fn title(&self) -> String {
        format!("isodisc monthly priors on the grid of {}", self.grid_file)
    }
}
use crate::error::{Context, Error, Result};

/// First bytes of a block file.
const BLOCK_MAGIC: &[u8] = b"isodisc grid block 1\n";

/// Gridded monthly priors in memory.
#[derive(Debug, Clone, PartialEq)]
pub struct GridPriors {
    /// Cell-centre latitudes and longitudes, degrees.
    pub lat: Vec<f64>,
    pub lon: Vec<f64>,
    /// Months, (year, month).
    pub month_starts: Vec<(i32, u32)>,
    /// 1 where a cell was run, `[lat][lon]`.
    pub land_mask: Vec<u8>,
    /// One entry per field of [`GRID_FIELDS`]: values `[time][lat][lon]`, NaN = no value.
    pub fields: Vec<Vec<f64>>,
}

/// The blocks of a grid: land cells in order, [`BLOCK_CELLS`] at a time.
pub fn blocks(layout: &Layout) -> Vec<&[usize]> {
    layout.land.chunks(BLOCK_CELLS).collect()
}

/// Path of block `b`'s file.
pub fn block_path(dir: &Path, b: usize) -> PathBuf {
    dir.join("blocks").join(format!("{b:06}.bin"))
}

/// Writes a block's values (cell index, then `[field][month]` values, little-endian).
pub fn write_block(dir: &Path, b: usize, hash: &str, cells: &[(usize, Vec<f64>)]) -> Result<()> {
    let mut bytes = BLOCK_MAGIC.to_vec();
    bytes.extend_from_slice(hash.as_bytes());
    bytes.push(b'\n');
    for (cell, values) in cells {
        bytes.extend_from_slice(&(*cell as u64).to_le_bytes());
        for v in values {
            bytes.extend_from_slice(&v.to_le_bytes());
        }
    }
    let path = block_path(dir, b);
    std::fs::create_dir_all(path.parent().expect("has a parent"))
        .with_context(|| format!("cannot create {}", dir.join("blocks").display()))?;
    crate::output::write_atomic(&path, &bytes)
}

/// Reads a block file written for `grid`; None when absent, an error when it belongs to another
/// grid file or is damaged.
pub fn read_block(grid: &Layout, path: &Path, cells: &[usize]) -> Result<Option<Vec<Vec<f64>>>> {
    let Ok(bytes) = std::fs::read(path) else {
        return Ok(None);
    };
    let bad = |why: &str| Error::msg(format!("{}: {why}", path.display()));
    let head_len = BLOCK_MAGIC.len() + grid.hash.len() + 1;
    if bytes.len() < head_len || &bytes[..BLOCK_MAGIC.len()] != BLOCK_MAGIC {
        return Err(bad("not a block file of isodisc grid"));
    }
    if &bytes[BLOCK_MAGIC.len()..head_len - 1] != grid.hash.as_bytes() {
        return Err(bad(
            "written for another grid file (or an edited one); use another output folder",
        ));
    }
    let per_cell = GRID_FIELDS.len() * grid.months.len();
    let body = &bytes[head_len..];
    if body.len() != cells.len() * (8 + 8 * per_cell) {
        return Err(bad(
            "its size does not match the grid's block; the file is damaged",
        ));
    }
    let mut out = Vec::with_capacity(cells.len());
    for (k, chunk) in body.chunks(8 + 8 * per_cell).enumerate() {
        let cell = u64::from_le_bytes(chunk[..8].try_into().expect("8 bytes")) as usize;
        if cell != cells[k] {
            return Err(bad("its cells are not the block's; the file is damaged"));
        }
        out.push(
            chunk[8..]
                .chunks(8)
                .map(|b| f64::from_le_bytes(b.try_into().expect("8 bytes")))
                .collect(),
        );
    }
    Ok(Some(out))
}

/// Gathers every block from `dirs` (each block from the first folder holding it) into the
/// gridded priors; an error names the first block that none holds.
pub fn gather(grid: &Layout, dirs: &[PathBuf]) -> Result<GridPriors> {
    let (nlat, nlon) = (grid.lat.len(), grid.lon.len());
    let ncell = nlat * nlon;
    let nm = grid.months.len();
    let mut fields = vec![vec![f64::NAN; nm * ncell]; GRID_FIELDS.len()];
    let mut land_mask = vec![0u8; ncell];
    for (b, cells) in blocks(grid).into_iter().enumerate() {
        let mut found = None;
        for d in dirs {
            if let Some(v) = read_block(grid, &block_path(d, b), cells)? {
                found = Some(v);
                break;
            }
        }
        let values = found.ok_or_else(|| {
            Error::msg(format!(
                "block {b} of {} (cells {}…{}) is in none of {}",
                blocks(grid).len(),
                cells[0],
                cells[cells.len() - 1],
                dirs.iter()
                    .map(|d| d.display().to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
        })?;
        for (&cell, v) in cells.iter().zip(values) {
            land_mask[cell] = 1;
            for f in 0..GRID_FIELDS.len() {
                for m in 0..nm {
                    fields[f][m * ncell + cell] = v[f * nm + m];
                }
            }
        }
    }
    Ok(GridPriors {
        lat: grid.lat.clone(),
        lon: grid.lon.clone(),
        month_starts: grid.months.clone(),
        land_mask,
        fields,
    })
}

/// Cell bounds from centres: midpoints, the outer edges half a spacing out.
fn bounds(c: &[f64]) -> Vec<f64> {
    let n = c.len();
    let mut out = Vec::with_capacity(2 * n);
    for i in 0..n {
        let lo = if i > 0 {
            (c[i - 1] + c[i]) / 2.0
        } else if n > 1 {
            c[0] - (c[1] - c[0]) / 2.0
        } else {
            c[0] - 0.25
        };
        let hi = if i + 1 < n {
            (c[i] + c[i + 1]) / 2.0
        } else if n > 1 {
            c[n - 1] + (c[n - 1] - c[n - 2]) / 2.0
        } else {
            c[0] + 0.25
        };
        out.push(lo);
        out.push(hi);
    }
    out
}

/// Days from 1970-01-01 to the first of a month.
fn days_since_1970(y: i32, m: u32) -> f64 {
    let t = crate::forcing::LocalTime::from_ymdhm(y, m, 1, 0, 0).expect("a valid month");
    (t.minutes() / 1440) as f64
}

/// Writes `priors_grid.nc` (NetCDF classic, CF-1.8) through a temporary file.
pub fn write_priors_grid(path: &Path, p: &GridPriors, title: &str) -> Result<()> {
    let nc = |what: &str, e: &dyn std::fmt::Debug| {
        Error::msg(format!("{}: NetCDF {what}: {e:?}", path.display()))
    };
    let def = |e: netcdf3::InvalidDataSet| nc("definition", &e);
    let mut ds = DataSet::new();
    let nm = p.month_starts.len();
    ds.add_fixed_dim("time", nm).map_err(def)?;
    ds.add_fixed_dim("lat", p.lat.len()).map_err(def)?;
    ds.add_fixed_dim("lon", p.lon.len()).map_err(def)?;
    ds.add_fixed_dim("bnds", 2).map_err(def)?;
    ds.add_var_f64("time", &["time"]).map_err(def)?;
    for (k, v) in [
        ("units", "days since 1970-01-01 00:00:00"),
        ("calendar", "standard"),
        ("standard_name", "time"),
        ("long_name", "start of the month (UTC)"),
        ("bounds", "time_bnds"),
    ] {
        ds.add_var_attr_string("time", k, v).map_err(def)?;
    }
    ds.add_var_f64("time_bnds", &["time", "bnds"])
        .map_err(def)?;
    for (name, units, std) in [
        ("lat", "degrees_north", "latitude"),
        ("lon", "degrees_east", "longitude"),
    ] {
        ds.add_var_f64(name, &[name]).map_err(def)?;
        ds.add_var_attr_string(name, "units", units).map_err(def)?;
        ds.add_var_attr_string(name, "standard_name", std)
            .map_err(def)?;
        ds.add_var_attr_string(name, "bounds", format!("{name}_bnds"))
            .map_err(def)?;
        ds.add_var_f64(&format!("{name}_bnds"), &[name, "bnds"])
            .map_err(def)?;
    }
    ds.add_var_u8("land_mask", &["lat", "lon"]).map_err(def)?;
    ds.add_var_attr_string(
        "land_mask",
        "long_name",
        "1 where the cell has vegetation and was run",
    )
    .map_err(def)?;
    ds.add_var_attr_string("land_mask", "flag_values", "0 1")
        .map_err(def)?;
    for (name, units, long) in GRID_FIELDS {
        ds.add_var_f64(name, &["time", "lat", "lon"]).map_err(def)?;
        ds.add_var_attr_string(name, "units", units).map_err(def)?;
        ds.add_var_attr_string(name, "long_name", long)
            .map_err(def)?;
        ds.add_var_attr_f64(name, "_FillValue", vec![NC_FILL_F64])
            .map_err(def)?;
    }
    ds.add_global_attr_string("title", title).map_err(def)?;
    ds.add_global_attr_string("Conventions", "CF-1.8")
        .map_err(def)?;
    ds.add_global_attr_string(
        "source",
        format!(
            "isodisc {} grid (site model with carbon/13C pools per cell)",
            env!("CARGO_PKG_VERSION")
        ),
    )
    .map_err(def)?;

    let tmp = crate::output::sibling(path, "tmp");
    crate::output::track_temp(&tmp);
    let result = (|| -> Result<()> {
        let w = |e: netcdf3::WriteError| nc("write", &e);
        let mut fw = FileWriter::open(&tmp).map_err(w)?;
        fw.set_def(&ds, Version::Offset64Bit, 0).map_err(w)?;
        let starts: Vec<f64> = p
            .month_starts
            .iter()
            .map(|&(y, m)| days_since_1970(y, m))
            .collect();
        let mut tb = Vec::with_capacity(2 * nm);
        for &(y, m) in &p.month_starts {
            let (ny, nmo) = if m == 12 { (y + 1, 1) } else { (y, m + 1) };
            tb.push(days_since_1970(y, m));
            tb.push(days_since_1970(ny, nmo));
        }
        fw.write_var_f64("time", &starts).map_err(w)?;
        fw.write_var_f64("time_bnds", &tb).map_err(w)?;
        fw.write_var_f64("lat", &p.lat).map_err(w)?;
        fw.write_var_f64("lat_bnds", &bounds(&p.lat)).map_err(w)?;
        fw.write_var_f64("lon", &p.lon).map_err(w)?;
        fw.write_var_f64("lon_bnds", &bounds(&p.lon)).map_err(w)?;
        fw.write_var_u8("land_mask", &p.land_mask).map_err(w)?;
        for ((name, ..), values) in GRID_FIELDS.iter().zip(&p.fields) {
            let filled: Vec<f64> = values
                .iter()
                .map(|x| if x.is_nan() { NC_FILL_F64 } else { *x })
                .collect();
            fw.write_var_f64(name, &filled).map_err(w)?;
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
