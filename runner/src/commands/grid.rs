//! `isodisc grid GRID.toml --out DIR`: every cell with vegetation of a gridded weather set run as a
//! site, in parallel, by blocks of land cells; monthly priors on the grid in `priors_grid.nc`.
//! `--shard K/N` runs every N-th block; a run re-started into its folder resumes at the first
//! unfinished block; `isodisc merge` joins shard folders. `--cell LAT,LON --export DIR` writes one
//! cell's site file and weather for `isodisc run`.

use std::path::{Path, PathBuf};
use std::time::Instant;

use rayon::prelude::*;

use super::batch::parse_shard;
use super::ensemble::thread_pool;
use super::parse_period;
use crate::cli::GridArgs;
use crate::error::{Context, Error, Result};
use crate::grid::Grid;
use crate::grid::output::{Layout, blocks, gather, read_block, write_block};
use crate::output::{plural, write_json, write_marker};
use crate::priors_grid::write_priors_grid;

/// The file name of the gridded priors.
pub const PRIORS_GRID: &str = "priors_grid.nc";

/// A validated `isodisc grid`.
#[derive(Debug)]
pub struct GridPlan {
    grid: Grid,
    what: What,
    threads: Option<usize>,
    quiet: bool,
}

#[derive(Debug)]
enum What {
    Run {
        out: PathBuf,
        shard: Option<(usize, usize)>,
    },
    Export {
        cell: usize,
        dir: PathBuf,
    },
}

/// `LAT,LON` in degrees.
fn parse_cell(s: &str) -> Result<(f64, f64)> {
    let bad = || {
        Error::msg(format!(
            "--cell `{s}`: expected LAT,LON in degrees, e.g. 36.25,3.75"
        ))
    };
    let (a, b) = s.split_once(',').ok_or_else(bad)?;
    let lat: f64 = a.trim().parse().map_err(|_| bad())?;
    let lon: f64 = b.trim().parse().map_err(|_| bad())?;
    if !lat.is_finite() || !lon.is_finite() {
        return Err(bad());
    }
    Ok((lat, lon))
}

impl GridPlan {
    /// Checks the flags, reads the grid file, its weather and maps.
    pub fn from_args(args: &GridArgs) -> Result<Self> {
        let shard = args.shard.as_deref().map(parse_shard).transpose()?;
        let cell = args.cell.as_deref().map(parse_cell).transpose()?;
        super::ensemble::check_threads(args.threads)?;
        let (from, to) = parse_period(&args.period)?;
        let grid = Grid::load(&args.grid, from, to)?;
        let what = match (cell, &args.export, &args.out) {
            (Some((lat, lon)), Some(dir), None) => What::Export {
                cell: grid.nearest(lat, lon)?,
                dir: dir.clone(),
            },
            (None, None, Some(out)) => What::Run {
                out: out.clone(),
                shard,
            },
            _ => {
                return Err(Error::msg(
                    "give either --out DIR (run the grid) or --cell LAT,LON --export DIR (write \
                     one cell's site and weather)",
                ));
            }
        };
        Ok(Self {
            grid,
            what,
            threads: args.threads,
            quiet: args.quiet,
        })
    }

    /// Runs the plan.
    pub fn run(&self) -> Result<()> {
        match &self.what {
            What::Export { cell, dir } => {
                let written = self.grid.export_cell(*cell, dir)?;
                if !self.quiet {
                    let (i, j) = self.grid.position(*cell);
                    println!(
                        "cell lat index {i} ({}°), lon index {j} ({}°):",
                        self.grid.forcing.axes.lat[i], self.grid.forcing.axes.lon[j]
                    );
                    for w in written {
                        println!("  {}", w.display());
                    }
                }
                Ok(())
            }
            What::Run { out, shard } => self.run_grid(out, *shard),
        }
    }

    fn run_grid(&self, out: &Path, shard: Option<(usize, usize)>) -> Result<()> {
        let started = Instant::now();
        let layout = Layout::of(&self.grid);
        let mut identity = layout.to_json();
        identity["kind"] = "grid".into();
        identity["isodisc_version"] = env!("CARGO_PKG_VERSION").into();
        identity["step_minutes"] = self.grid.forcing.step_minutes.into();
        identity["first_step"] = self.grid.forcing.times[0].to_string().into();
        identity["steps"] = self.grid.forcing.times.len().into();
        identity["shard"] = match shard {
            Some((k, n)) => serde_json::json!([k, n]),
            None => serde_json::Value::Null,
        };
        let json_path = out.join("grid.json");
        if out.exists() {
            let same = std::fs::read_to_string(&json_path)
                .ok()
                .and_then(|t| serde_json::from_str::<serde_json::Value>(&t).ok())
                .is_some_and(|v| v == identity);
            let empty = std::fs::read_dir(out)
                .map(|mut d| d.next().is_none())
                .unwrap_or(false);
            if !same && !empty {
                return Err(Error::msg(format!(
                    "--out {}: the folder exists and is not a run of this grid file with these \
                     flags (its grid.json differs or is missing); give a new folder to start \
                     afresh, or the same flags to resume",
                    out.display()
                )));
            }
        }
        std::fs::create_dir_all(out).with_context(|| format!("cannot create {}", out.display()))?;
        write_marker(out, "grid")?;
        write_json(&json_path, &identity)?;

        let pool = thread_pool(self.threads)?;
        let all = blocks(&layout);
        let (mut done, mut ran, mut cells_run) = (0usize, 0usize, 0usize);
        let mut todo: Vec<(usize, &[usize])> = Vec::new();
        for (b, cells) in all.iter().enumerate() {
            if let Some((k, n)) = shard
                && b % n != k - 1
            {
                continue;
            }
            if read_block(&layout, &crate::grid::output::block_path(out, b), cells)?.is_some() {
                done += 1;
                continue;
            }
            todo.push((b, cells));
        }
        let (mut read_bytes, mut read_s) = (0usize, 0f64);
        for (lat, lon, list) in self.grid.windows(&todo) {
            let t = Instant::now();
            // In the run's pool: NetCDF-4 chunks are decompressed on --threads threads.
            let window = pool.install(|| self.grid.forcing.read_window(lat, lon))?;
            read_s += t.elapsed().as_secs_f64();
            read_bytes += window.bytes();
            for b in list {
                let cells = all[b];
                let values: Vec<Vec<f64>> = pool.install(|| {
                    cells
                        .par_iter()
                        .map(|&c| self.grid.run_cell_in(c, &window))
                        .collect::<Result<Vec<_>>>()
                })?;
                let pairs: Vec<(usize, Vec<f64>)> = cells.iter().copied().zip(values).collect();
                write_block(out, b, &layout.hash, &pairs)?;
                ran += 1;
                cells_run += cells.len();
            }
        }
        let whole = shard.is_none_or(|(_, n)| n == 1);
        if whole {
            let priors = gather(&layout, &[out.to_path_buf()])?;
            write_priors_grid(&out.join(PRIORS_GRID), &priors)?;
        }
        if !self.quiet {
            let a = &self.grid.forcing.axes;
            println!(
                "grid {}: {} × {} cells, {} with vegetation; {} of {} steps ({} min) from {}",
                self.grid.path.display(),
                a.lat.len(),
                a.lon.len(),
                self.grid.land.len(),
                self.grid.forcing.times.len(),
                self.grid.forcing.times.len(),
                self.grid.forcing.step_minutes,
                self.grid.forcing.times[0]
            );
            println!(
                "{} run ({}), {} already done, in {:.1} s; weather read: {:.0} MB in {:.1} s",
                plural(ran as u64, "block"),
                plural(cells_run as u64, "cell"),
                done,
                started.elapsed().as_secs_f64(),
                read_bytes as f64 / 1e6,
                read_s
            );
            if whole {
                println!("wrote {}", out.join(PRIORS_GRID).display());
            } else {
                println!(
                    "shard {}/{} done; join the shards with `isodisc merge`",
                    shard.map_or(1, |s| s.0),
                    shard.map_or(1, |s| s.1)
                );
            }
        }
        Ok(())
    }
}

/// True when `dir` holds a grid run (`grid.json` of kind grid).
pub fn is_grid_folder(dir: &Path) -> bool {
    read_grid_json(dir).is_some()
}

fn read_grid_json(dir: &Path) -> Option<serde_json::Value> {
    let text = std::fs::read_to_string(dir.join("grid.json")).ok()?;
    let v: serde_json::Value = serde_json::from_str(&text).ok()?;
    (v["kind"] == "grid").then_some(v)
}

/// `isodisc merge` of grid shards: every shard of the same grid run, every block found once;
/// writes `out/priors_grid.nc` (the same bytes as an unsharded run) and `out/grid.json`.
pub fn merge_grid(shards: &[PathBuf], out: &Path, overwrite: bool, quiet: bool) -> Result<()> {
    let mut first: Option<(serde_json::Value, Layout)> = None;
    for d in shards {
        let mut v = read_grid_json(d).ok_or_else(|| {
            Error::msg(format!(
                "{}: not a grid shard (no grid.json of `isodisc grid --out`)",
                d.display()
            ))
        })?;
        v["shard"] = serde_json::Value::Null;
        let layout = Layout::from_json(&v).ok_or_else(|| {
            Error::msg(format!(
                "{}: grid.json is not one this isodisc reads",
                d.join("grid.json").display()
            ))
        })?;
        match &first {
            None => first = Some((v, layout)),
            Some((v0, _)) if *v0 != v => {
                return Err(Error::msg(format!(
                    "{} and {} are shards of different grid runs (their grid.json differ)",
                    shards[0].display(),
                    d.display()
                )));
            }
            Some(_) => {}
        }
    }
    let (identity, layout) = first.ok_or_else(|| Error::msg("no shard folders given"))?;
    let priors = gather(&layout, shards)?;
    crate::output::write_folder(out, overwrite, "merge", |tmp| -> Result<()> {
        write_priors_grid(&tmp.join(PRIORS_GRID), &priors)?;
        write_json(&tmp.join("grid.json"), &identity)
    })?;
    if !quiet {
        println!(
            "merged {} into {}",
            plural(shards.len() as u64, "shard"),
            out.join(PRIORS_GRID).display()
        );
    }
    Ok(())
}
