//! `isodisc run SITE.toml --out DIR`: drives the site model with its weather file and writes steps,
//! daily, monthly and annual results and a run log, all into a temporary folder that replaces DIR
//! only when everything is written — a failed run leaves DIR as it was.

use std::fmt::Write as _;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Instant;

use crate::cli::RunArgs;
use crate::commands::parse_period;
use crate::error::{Context, Error, Result};
use crate::forcing::{ForcingReport, LocalDate, LocalTime, Variable};
use crate::numfmt::{push_date, push_num, push_time};
use crate::output::{
    AtomicFile, check_out_dir, fmt_num, inputs_json, json_num, plural, write_folder, write_json,
};
use crate::simulate::{
    PERIOD_COLUMNS, PeriodRow, Simulated, StepSink, StepView, period_col, simulate,
};
use crate::site::Site;

/// Columns of `steps.csv`: name, unit, meaning.
pub const STEP_COLUMNS: &[(&str, &str, &str)] = &[
    ("time", "ISO 8601 local standard time", "start of the step"),
    ("t_air", "degC", "air temperature (= leaf temperature)"),
    ("vpd", "kPa", "vapour pressure deficit"),
    ("sw", "W m-2", "incoming shortwave"),
    ("ppfd", "umol m-2 s-1", "incoming PPFD"),
    ("co2", "umol mol-1", "CO2 of the air"),
    ("d13c_co2", "permil VPDB", "d13C of the CO2 of the air"),
    ("pressure", "kPa", "air pressure"),
    ("precip", "mm", "precipitation over the step"),
    ("lai_c3", "m2 m-2", "LAI of the C3 canopy where it grows"),
    ("lai_c4", "m2 m-2", "LAI of the C4 canopy where it grows"),
    ("beta", "-", "soil-water factor (1 = no stress)"),
    (
        "cold_factor",
        "-",
        "cold rule's factor on photosynthetic capacity (0: frost or frozen soil)",
    ),
    (
        "gpp",
        "umol m-2 s-1",
        "gross primary production per m2 of site ground",
    ),
    (
        "gpp_c3",
        "umol m-2 s-1",
        "GPP of the C3 part per m2 of site ground",
    ),
    (
        "gpp_c4",
        "umol m-2 s-1",
        "GPP of the C4 part per m2 of site ground",
    ),
    ("c4_share", "-", "gpp_c4 / gpp"),
    (
        "ci_ca_c3",
        "-",
        "assimilation-weighted ci/ca of the C3 canopy",
    ),
    (
        "ci_ca_c4",
        "-",
        "assimilation-weighted ci/ca of the C4 canopy",
    ),
    (
        "discrimination_c3",
        "permil",
        "assimilation-weighted 13C discrimination of the C3 canopy",
    ),
    (
        "discrimination_c4",
        "permil",
        "assimilation-weighted 13C discrimination of the C4 canopy",
    ),
    (
        "discrimination",
        "permil",
        "ecosystem 13C discrimination, GPP-weighted over pathways",
    ),
    (
        "d13c_assimilate",
        "permil VPDB",
        "d13C of the newly fixed carbon",
    ),
    ("reco", "umol m-2 s-1", "ecosystem respiration"),
    ("ra", "umol m-2 s-1", "autotrophic respiration"),
    ("rh", "umol m-2 s-1", "heterotrophic respiration"),
    (
        "nee",
        "umol m-2 s-1",
        "net ecosystem exchange, reco - gpp (positive: a source)",
    ),
    (
        "d13c_respiration",
        "permil VPDB",
        "d13C of ecosystem respiration",
    ),
    ("d13c_ra", "permil VPDB", "d13C of autotrophic respiration"),
    (
        "d13c_rh",
        "permil VPDB",
        "d13C of heterotrophic respiration",
    ),
    (
        "disequilibrium",
        "permil",
        "d13c_respiration - d13c_assimilate (daytime steps)",
    ),
    (
        "isoflux_disequilibrium",
        "permil gC m-2",
        "reco over the step x disequilibrium",
    ),
    ("transpiration", "mm", "transpiration over the step"),
    ("soil_evaporation", "mm", "soil evaporation over the step"),
    (
        "soil_water",
        "mm",
        "plant-available water in the bucket after the step",
    ),
    (
        "filled",
        "0/1",
        "1 when a driver of this step was gap-filled",
    ),
    (
        "missing",
        "0/1",
        "1 when a driver was missing: outputs left empty",
    ),
];
/// A validated `isodisc run`.
#[derive(Debug)]
pub struct RunPlan {
    site: Site,
    out: PathBuf,
    from: Option<LocalTime>,
    to: Option<LocalTime>,
    overwrite: bool,
    quiet: bool,
    command: String,
}

impl RunPlan {
    /// Reads and validates the site file and the output folder before any work starts.
    pub fn from_args(args: &RunArgs) -> Result<Self> {
        let site = Site::load(&args.site)?;
        let (from, to) = parse_period(&args.period)?;
        let inputs: Vec<PathBuf> = site.input_files().into_iter().map(|f| f.1).collect();
        check_out_dir(&args.out, args.overwrite, &inputs)?;
        if site.co2.is_none()
            && site.file.forcing.columns.co2.is_none()
            && site.file.forcing.preset.is_none()
        {
            return Err(Error::msg(format!(
                "{}: [atmosphere] co2 = \"forcing\" but [forcing.columns] maps no co2 column",
                site.path.display()
            )));
        }
        if site.d13c_co2.is_none() && site.file.forcing.columns.d13c_co2.is_none() {
            return Err(Error::msg(format!(
                "{}: [atmosphere] d13c_co2 = \"forcing\" but [forcing.columns] maps no d13c_co2 column",
                site.path.display()
            )));
        }
        Ok(Self {
            site,
            out: args.out.clone(),
            from,
            to,
            overwrite: args.overwrite,
            quiet: args.quiet,
            command: std::env::args().collect::<Vec<_>>().join(" "),
        })
    }

    /// Runs the site and writes the results.
    pub fn run(&self) -> Result<()> {
        let (summary, warnings) = self.execute()?;
        if !self.quiet {
            print!("{summary}");
        } else {
            // Warnings reach the terminal even without the summary.
            for w in warnings {
                eprintln!("isodisc run: warning: {w}");
            }
        }
        Ok(())
    }

    /// Runs the site and writes the results; returns the summary and the weather warnings
    /// without printing them.
    pub fn execute(&self) -> Result<(String, Vec<String>)> {
        let started = Instant::now();
        write_folder(&self.out, self.overwrite, "run", |tmp| {
            self.run_into(tmp, started)
        })
    }

    /// A run of an already loaded (and possibly changed) site over `period`, for commands that
    /// write a run inside their own folder (`isodisc fit`'s `best/`).
    pub(crate) fn for_site(site: Site, out: PathBuf, period: crate::commands::Period) -> Self {
        Self {
            site,
            out,
            from: period.0,
            to: period.1,
            overwrite: false,
            quiet: true,
            command: std::env::args().collect::<Vec<_>>().join(" "),
        }
    }

    /// Runs the site and writes the files into `dir` (which exists).
    pub(crate) fn run_into(&self, dir: &Path, started: Instant) -> Result<(String, Vec<String>)> {
        let site = &self.site;
        let mut reader = site
            .weather(self.from, self.to)
            .with_context(|| format!("site {}", site.path.display()))?;
        let step_minutes = reader.report().step_minutes;
        let mut sink = FileSink::create(dir, step_minutes, site)?;
        let sim = simulate(site, &mut reader, step_minutes, &mut sink)?;
        sink.commit()?;
        let mut written = vec!["steps.csv", "pools_daily.csv"];
        let files = ["daily.csv", "monthly.csv", "annual.csv"];
        for ((rows, file), on) in sim.periods.iter().zip(files).zip(site.aggregates) {
            if on {
                write_periods(&dir.join(file), rows)?;
                written.push(file);
            }
        }
        let report = reader.report();
        self.write_log(dir, &report, &sim, started)?;
        written.push("run.json");
        Ok((
            summary(site, &sim, &report, &self.out, &written),
            report.warnings.clone(),
        ))
    }

    fn write_log(
        &self,
        dir: &Path,
        report: &ForcingReport,
        sim: &Simulated,
        started: Instant,
    ) -> Result<()> {
        let site = &self.site;
        let forcing_path = &report.path;
        let units = |cols: &[(&str, &str, &str)]| -> serde_json::Value {
            cols.iter()
                .map(|(n, u, d)| {
                    (
                        (*n).to_string(),
                        serde_json::json!({"unit": u, "meaning": d}),
                    )
                })
                .collect::<serde_json::Map<_, _>>()
                .into()
        };
        let vegetation: serde_json::Map<String, serde_json::Value> = site
            .settings
            .vegetation
            .iter()
            .map(|v| {
                let params: serde_json::Map<String, serde_json::Value> = v
                    .pathway()
                    .specs()
                    .iter()
                    .map(|s| (s.name.to_string(), leaf_param_json(v, s.name)))
                    .collect();
                (
                    v.pathway().as_str().to_string(),
                    serde_json::json!({
                        "cover": v.cover,
                        "lai": if site.lai_from_forcing {
                            "forcing".into()
                        } else if v.phenology.is_some() {
                            "phenology".into()
                        } else {
                            json_num(v.lai_m2_m2)
                        },
                        "phenology": v.phenology.map(|p| serde_json::json!({
                            "kind": p.kind().as_str(),
                            "lai_min": p.lai_min_m2_m2(),
                            "lai_max": p.lai_max_m2_m2(),
                        })),
                        "preset": match v.pathway() {
                            isodisc_model::leaf::Pathway::C3 => site.file.vegetation.c3.as_ref(),
                            isodisc_model::leaf::Pathway::C4 => site.file.vegetation.c4.as_ref(),
                        }
                        .and_then(|b| b.preset.clone()),
                        "kn": v.canopy.kn(),
                        "clumping": v.canopy.radiation().clumping(),
                        "leaf_width_m": v.leaf_width_m,
                        "options": format!("{:?}", v.options),
                        "params": params,
                    }),
                )
            })
            .collect();
        let gaps: serde_json::Map<String, serde_json::Value> = report
            .filled
            .iter()
            .map(|(k, v)| (k.name().to_string(), (*v).into()))
            .collect();
        let log = serde_json::json!({
            "isodisc_version": env!("CARGO_PKG_VERSION"),
            "command": self.command,
            "site_file": site.path.display().to_string(),
            "settings": {
                "site": {
                    "name": site.file.site.name,
                    "latitude": site.file.site.latitude,
                    "longitude": site.file.site.longitude,
                    "elevation_m": site.file.site.elevation_m,
                    "utc_offset_h": site.file.site.utc_offset_h,
                },
                "vegetation": vegetation,
                "soil": {
                    "field_capacity": site.file.soil.field_capacity,
                    "wilting_point": site.file.soil.wilting_point,
                    "root_depth_m": site.file.soil.root_depth_m,
                    "initial_water": match site.file.soil.initial_water {
                        crate::site::ValueOrForcing::Value(v) => json_num(v),
                        crate::site::ValueOrForcing::Forcing(_) => "forcing".into(),
                    },
                    "beta_threshold": site.file.soil.beta_threshold.unwrap_or(0.5),
                    "beta_target": site.file.soil.beta_target.clone().unwrap_or_else(|| "g1".into()),
                    "priestley_taylor_alpha": site.settings.priestley_taylor.alpha(),
                },
                "atmosphere": {
                    "co2": site.co2.map_or("forcing".into(), json_num),
                    "d13c_co2": site.d13c_co2.map_or("forcing".into(), json_num),
                    "o2": site.o2,
                },
                "forcing": {
                    "path": forcing_path.display().to_string(),
                    "step_minutes": report.step_minutes,
                    "first_step": report.first.map(|t| t.to_string()),
                    "last_step": report.last.map(|t| t.to_string()),
                    "header_line": report.header_line,
                    "file_first_step": report.file_first.map(|t| t.to_string()),
                    "file_last_step": report.file_last.map(|t| t.to_string()),
                    "notes": report.notes,
                    "period_beyond_file": report.partial,
                },
                "output": {"daily": site.aggregates[0], "monthly": site.aggregates[1], "annual": site.aggregates[2]},
                "from": self.from.map(|t| t.to_string()),
                "to_exclusive": self.to.map(|t| t.to_string()),
            },
            "inputs": inputs_json(&site.input_files())?,
            "gaps": {
                "rows_read": report.rows_read,
                "steps": report.steps,
                "filled_values": gaps,
                "missing_steps": report.missing_steps,
                "night_radiation_zeroed": report.night_radiation_zeroed,
                "missing_values": report
                    .missing_values
                    .iter()
                    .map(|(k, v)| (k.name().to_string(), serde_json::Value::from(*v)))
                    .collect::<serde_json::Map<_, _>>(),
                "refused_by_quality_flag": report
                    .qc_refused
                    .iter()
                    .map(|(k, v)| (k.name().to_string(), serde_json::Value::from(*v)))
                    .collect::<serde_json::Map<_, _>>(),
                "precipitation_totals_spread": report.precip_totals_spread,
            },
            "warnings": report.warnings,
            "units": {
                "steps.csv": units(STEP_COLUMNS),
                "periods": units(PERIOD_COLUMNS),
                "pools_daily.csv": {"c_<pool>": "gC m-2", "d13c_<pool>": "permil VPDB"},
            },
            "pools": {
                "settings": serde_json::to_value(&site.pools)?,
                "network": resolved_network(site)?,
                "spin_up": {
                    "with_atmospheric_history": sim.pools.with_history,
                    "history_file": site.file.atmosphere.history.as_ref().map(|h| h.display().to_string()),
                    "mean_assimilation_gc_m2_day": sim.pools.spin_up.assimilation_gc_m2_day,
                    "mean_soil_temperature_c": sim.pools.spin_up.t_soil_c,
                    "mean_moisture": sim.pools.spin_up.moisture,
                    "mean_turnover_factor": sim.pools.spin_up.turnover_factor,
                    "mean_discrimination_permil": sim.pools.spin_up_discrimination_permil,
                },
                "mean_age_respired_days": sim.pools.mean_age_respired_days,
                "mean_age_ra_days": sim.pools.mean_age_ra_days,
                "mean_age_rh_days": sim.pools.mean_age_rh_days,
                "effective_lag_days": sim.pools.effective_lag_days,
                "effective_lag_r": json_num(sim.pools.effective_lag_r),
            },
            "wall_time_s": started.elapsed().as_secs_f64(),
        });
        write_json(&dir.join("run.json"), &log)
    }
}

/// The pool network actually used, every default filled in, for `run.json`.
fn resolved_network(site: &Site) -> Result<serde_json::Value> {
    let (network, _) = site.pools.build()?;
    Ok(network
        .pools()
        .iter()
        .map(|p| {
            serde_json::json!({
                "name": p.name,
                "turnover_days": p.turnover_days,
                "respired_fraction": p.respired_fraction,
                "kind": p.kind,
                "transfers": p.transfers.iter().cloned().collect::<std::collections::BTreeMap<_, _>>(),
                "assimilation_share": p.assimilation_share,
                "responds_to_environment": p.responds_to_environment,
                "epsilon_respiration_permil": p.epsilon_respiration_permil,
                "epsilon_transfer_permil": p.epsilon_transfer_permil,
            })
        })
        .collect())
}

/// Writes `steps.csv` and `pools_daily.csv` as the simulation goes.
struct FileSink {
    steps: AtomicFile,
    pools: AtomicFile,
    pools_header_written: bool,
    pool_names: Vec<String>,
    step_s: f64,
    line: Vec<u8>,
}

impl FileSink {
    fn create(dir: &Path, step_minutes: u32, site: &Site) -> Result<Self> {
        let mut steps = AtomicFile::create(&dir.join("steps.csv"))?;
        let header: Vec<&str> = STEP_COLUMNS.iter().map(|c| c.0).collect();
        writeln!(steps.writer(), "{}", header.join(","))?;
        let (network, _) = site.pools.build()?;
        Ok(Self {
            steps,
            pools: AtomicFile::create(&dir.join("pools_daily.csv"))?,
            pools_header_written: false,
            pool_names: network.pools().iter().map(|p| p.name.clone()).collect(),
            step_s: f64::from(step_minutes) * 60.0,
            line: Vec::with_capacity(512),
        })
    }

    fn commit(self) -> Result<()> {
        self.steps.commit()?;
        self.pools.commit()
    }
}

impl StepSink for FileSink {
    fn step(&mut self, v: &StepView<'_>) -> Result<()> {
        let nan = f64::NAN;
        let (f, d, s, r) = (v.forcing, v.drivers, v.site, v.respiration);
        let line = &mut self.line;
        line.clear();
        push_time(line, f.time);
        let co2 = d.map_or(f.co2_umol_mol.unwrap_or(nan), |d| d.co2_umol_mol);
        let d13c = d.map_or(f.d13c_co2_permil.unwrap_or(nan), |d| d.d13c_co2_permil);
        let part = |i: Option<usize>, g: fn(&isodisc_model::site::PathwayStep) -> f64| match (i, s)
        {
            (Some(i), Some(s)) => g(&s.pathways[i]),
            _ => nan,
        };
        let sv = |g: fn(&isodisc_model::site::SiteStep) -> f64| s.map_or(nan, g);
        let rv = |g: fn(&crate::simulate::RespirationStep) -> f64| r.map_or(nan, g);
        let diseq = rv(|r| r.d13c_reco) - sv(|s| s.d13c_assimilate_permil);
        let reco_gc = rv(|r| r.reco_umol_m2_s) * self.step_s * crate::simulate::GC_PER_UMOL;
        let values = [
            f.t_air_c,
            f.vpd_kpa,
            f.sw_w_m2,
            f.ppfd_umol_m2_s,
            co2,
            d13c,
            f.pressure_kpa,
            f.precip_mm,
            part(v.c3, |p| p.lai_m2_m2),
            part(v.c4, |p| p.lai_m2_m2),
            sv(|s| s.beta),
            sv(|s| s.cold_factor),
            sv(|s| s.gpp_umol_m2_s),
            part(v.c3, |p| p.gpp_umol_m2_s),
            part(v.c4, |p| p.gpp_umol_m2_s),
            sv(|s| s.c4_share),
            part(v.c3, |p| p.canopy.ci_ca),
            part(v.c4, |p| p.canopy.ci_ca),
            part(v.c3, |p| p.canopy.discrimination_permil),
            part(v.c4, |p| p.canopy.discrimination_permil),
            sv(|s| s.discrimination_permil),
            sv(|s| s.d13c_assimilate_permil),
            rv(|r| r.reco_umol_m2_s),
            rv(|r| r.ra_umol_m2_s),
            rv(|r| r.rh_umol_m2_s),
            rv(|r| r.reco_umol_m2_s) - sv(|s| s.gpp_umol_m2_s),
            rv(|r| r.d13c_reco),
            rv(|r| r.d13c_ra),
            rv(|r| r.d13c_rh),
            diseq,
            reco_gc * diseq,
            sv(|s| s.transpiration_mm),
            sv(|s| s.soil_evaporation_mm),
            sv(|s| s.soil_water_mm),
        ];
        for x in values {
            line.push(b',');
            push_num(line, x);
        }
        line.extend_from_slice(if f.filled { b",1" } else { b",0" });
        line.extend_from_slice(if s.is_none() { b",1\n" } else { b",0\n" });
        self.steps.writer().write_all(line)?;
        Ok(())
    }

    fn pools_daily(&mut self, date: LocalDate, c_g_m2: &[f64], d13c: &[f64]) -> Result<()> {
        let line = &mut self.line;
        line.clear();
        if !self.pools_header_written {
            line.extend_from_slice(b"date");
            for n in &self.pool_names {
                line.extend_from_slice(format!(",c_{n},d13c_{n}").as_bytes());
            }
            line.push(b'\n');
            self.pools_header_written = true;
        }
        push_date(line, date);
        for (c, d) in c_g_m2.iter().zip(d13c) {
            line.push(b',');
            push_num(line, *c);
            line.push(b',');
            push_num(line, *d);
        }
        line.push(b'\n');
        self.pools.writer().write_all(line)?;
        Ok(())
    }
}

/// Writes one of `daily.csv`, `monthly.csv`, `annual.csv` atomically.
pub fn write_periods(path: &Path, rows: &[PeriodRow]) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    let header: Vec<&str> = PERIOD_COLUMNS.iter().map(|c| c.0).collect();
    writeln!(f.writer(), "{}", header.join(","))?;
    let mut line = String::new();
    for r in rows {
        line.clear();
        line.push_str(&r.key);
        for v in &r.values {
            line.push(',');
            fmt_num(&mut line, *v);
        }
        line.push('\n');
        f.writer().write_all(line.as_bytes())?;
    }
    f.commit()
}

fn summary(
    site: &Site,
    sim: &Simulated,
    report: &ForcingReport,
    out: &Path,
    written: &[&str],
) -> String {
    let show = |v: f64, digits: usize| {
        if v.is_finite() {
            format!("{v:.digits$}")
        } else {
            "-".into()
        }
    };
    let mut s = String::new();
    let _ = writeln!(
        s,
        "isodisc run: {} ({})",
        site.file.site.name,
        site.path.display()
    );
    let _ = writeln!(
        s,
        "{:<6} {:>9} {:>8} {:>8} {:>8} {:>8} {:>9} {:>9} {:>8} {:>7} {:>7}",
        "year", "GPP", "Δ C3", "Δ C4", "Δ eco", "C4 share", "Reco", "δR", "D", "filled", "missing"
    );
    let _ = writeln!(
        s,
        "{:<6} {:>9} {:>8} {:>8} {:>8} {:>8} {:>9} {:>9} {:>8} {:>7} {:>7}",
        "", "gC m-2", "‰", "‰", "‰", "-", "gC m-2", "‰ VPDB", "‰", "steps", "steps"
    );
    let mut partial_years = Vec::new();
    for r in &sim.periods[2] {
        let v = |name: &str| r.values[period_col(name)];
        let _ = writeln!(
            s,
            "{:<6} {:>9} {:>8} {:>8} {:>8} {:>8} {:>9} {:>9} {:>8} {:>7} {:>7}",
            r.key,
            show(v("gpp"), 1),
            show(v("discrimination_c3"), 2),
            show(v("discrimination_c4"), 2),
            show(v("discrimination"), 2),
            show(v("c4_share"), 3),
            show(v("reco"), 1),
            show(v("d13c_respiration"), 2),
            show(v("disequilibrium"), 3),
            v("filled_steps"),
            v("missing_steps"),
        );
        if v("complete") == 0.0 {
            partial_years.push(format!(
                "part of {}: {} of the year",
                r.key,
                plural(v("steps") as u64, "step")
            ));
        }
    }
    for p in partial_years {
        let _ = writeln!(s, "{p} (sums cover only those steps)");
    }
    let p = &sim.pools;
    let age = p
        .mean_age_respired_days
        .map_or("-".into(), |d| plural(d.round() as u64, "day"));
    let lag = p.effective_lag_days.map_or("-".into(), |k| {
        format!("{} (r = {:.2})", plural(k as u64, "day"), p.effective_lag_r)
    });
    let _ = writeln!(
        s,
        "respired carbon: mean age {age}; effective lag of δR behind the assimilate {lag}"
    );
    let filled: usize = report.filled.values().sum();
    let span = match (report.first, report.last) {
        (Some(a), Some(b)) => format!(" ({a} to {b})"),
        _ => String::new(),
    };
    let _ = writeln!(
        s,
        "weather: {}, {} of {} min{span}; {} gap-filled, {} missing, {} set to 0",
        report.path.display(),
        plural(report.steps as u64, "step"),
        report.step_minutes,
        plural(filled as u64, "value"),
        plural(report.missing_steps as u64, "step"),
        plural(
            report.night_radiation_zeroed as u64,
            "night radiation value"
        ),
    );
    let read = |v: Variable| report.read.contains(&v);
    let mut assumed = report.notes.clone();
    if let Some(c) = site.co2 {
        assumed.push(format!("CO2 constant at {c} µmol mol⁻¹ (site file)"));
    }
    if let Some(d) = site.d13c_co2 {
        assumed.push(format!("δ13C of CO2 constant at {d} ‰ (site file)"));
    }
    if !read(Variable::Wind) {
        assumed.push("no wind column: the leaf boundary-layer conductance is the parameter gb (infinite unless set)".into());
    }
    if !site.lai_from_forcing {
        assumed.push("LAI constant per vegetation (site file)".into());
    }
    for note in &assumed {
        let _ = writeln!(s, "  assumed: {note}");
    }
    for p in &report.partial {
        let _ = writeln!(s, "  period: {p}");
    }
    for w in &report.warnings {
        let _ = writeln!(s, "  warning: {w}");
    }
    let _ = writeln!(s, "written to {}: {}", out.display(), written.join(", "));
    s
}

/// A leaf parameter for run.json: its value (`inf` spelled out), the value in use of an "auto"
/// default, or, where that
/// follows the growth temperature of each step (acclimated Jmax25 and entropy terms), the words
/// "follows growth temperature".
fn leaf_param_json(v: &isodisc_model::site::Vegetation, name: &str) -> serde_json::Value {
    let at = |t_growth_c: f64| {
        v.leaf
            .in_use(name, &v.options, t_growth_c)
            .unwrap_or(f64::NAN)
    };
    if at(15.0) == at(30.0) {
        let x = at(25.0);
        if x == f64::INFINITY {
            "inf".into() // as the site file and --set spell it
        } else {
            json_num(x)
        }
    } else {
        "follows growth temperature".into()
    }
}
