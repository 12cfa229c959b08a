//! What a grid run writes: one file per finished block of cells (`blocks/NNNNNN.bin`: each cell's
//! monthly aggregates), the run's identity (`grid.json`), and, when every block is done,
//! `priors_grid.nc` — the standard gridded priors of [`crate::priors_grid`]. The NetCDF file
//! depends only on the block values and the grid, so shards merged give the same bytes as one run.

use std::path::{Path, PathBuf};

use super::{BLOCK_CELLS, GRID_FIELDS, Grid};
use crate::error::{Context, Error, Result};
use crate::priors_grid::{GridAttributes, GridPriors, MonthAggregate, standard_fields};
use crate::simulate::{PERIOD_COLUMNS, PeriodRow, period_col};

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
            "fields": GRID_FIELDS,
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

/// First bytes of a block file.
const BLOCK_MAGIC: &[u8] = b"isodisc grid block 1\n";

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
/// standard gridded priors; an error names the first block that none holds.
pub fn gather(grid: &Layout, dirs: &[PathBuf]) -> Result<GridPriors> {
    let ncell = grid.lat.len() * grid.lon.len();
    let nm = grid.months.len();
    // cells[c][member][month]: one member per cell with vegetation, none elsewhere.
    let mut cells: Vec<Vec<Vec<Option<MonthAggregate>>>> = vec![Vec::new(); ncell];
    let mut land_mask = vec![0u8; ncell];
    let all = blocks(grid);
    for (b, block) in all.iter().enumerate() {
        let mut found = None;
        for d in dirs {
            if let Some(v) = read_block(grid, &block_path(d, b), block)? {
                found = Some(v);
                break;
            }
        }
        let values = found.ok_or_else(|| {
            Error::msg(format!(
                "block {b} of {} (cells {}…{}) is in none of {}",
                all.len(),
                block[0],
                block[block.len() - 1],
                dirs.iter()
                    .map(|d| d.display().to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
        })?;
        for (&cell, v) in block.iter().zip(values) {
            land_mask[cell] = 1;
            let months = (0..nm)
                .map(|m| {
                    // A month the run did not reach has no `complete` flag.
                    let complete = v[GRID_FIELDS
                        .iter()
                        .position(|f| *f == "complete")
                        .expect("listed")
                        * nm
                        + m];
                    if complete.is_nan() {
                        return None;
                    }
                    let mut row = PeriodRow {
                        key: String::new(),
                        values: vec![f64::NAN; PERIOD_COLUMNS.len() - 1],
                    };
                    for (f, name) in GRID_FIELDS.iter().enumerate() {
                        row.values[period_col(name)] = v[f * nm + m];
                    }
                    Some(MonthAggregate::from_period_row(&row))
                })
                .collect();
            cells[cell] = vec![months];
        }
    }
    Ok(GridPriors {
        lat: grid.lat.clone(),
        lon: grid.lon.clone(),
        lat_bnds: bounds(&grid.lat),
        lon_bnds: bounds(&grid.lon),
        month_starts: grid.months.clone(),
        land_mask,
        fields: standard_fields(&grid.months, &cells, false),
        attributes: GridAttributes::new(&grid.title(), &format!("isodisc grid {}", grid.grid_file)),
    })
}

/// Cell bounds from centres: midpoints, the outer edges half a spacing out; each pair ordered
/// low to high whichever way the coordinate runs.
fn bounds(c: &[f64]) -> Vec<[f64; 2]> {
    let n = c.len();
    let half = if n > 1 { (c[1] - c[0]) / 2.0 } else { 0.25 };
    (0..n)
        .map(|i| {
            let lo = if i > 0 {
                (c[i - 1] + c[i]) / 2.0
            } else {
                c[0] - half
            };
            let hi = if i + 1 < n {
                (c[i] + c[i + 1]) / 2.0
            } else {
                c[n - 1]
                    + if n > 1 {
                        (c[n - 1] - c[n - 2]) / 2.0
                    } else {
                        0.25
                    }
            };
            [lo.min(hi), lo.max(hi)]
        })
        .collect()
}
