//! `isodisc run SITE.toml --out DIR`: drives the site model with its weather file and writes steps,
//! daily, monthly and annual results and a run log, all into a temporary folder that replaces DIR
//! only when everything is written — a failed run leaves DIR as it was.

use std::fmt::Write as _;
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Instant;

use isodisc_model::leaf::Pathway;
use isodisc_model::site::{SiteDrivers, SiteModel, SiteStep};

use crate::cli::RunArgs;
use crate::error::{Context, Error, Result};
use crate::forcing::{ForcingReader, ForcingReport, ForcingStep, LocalTime};
use crate::output::{AtomicFile, fmt_num, json_num};
use crate::site::Site;

/// Grams of carbon per µmol of CO2.
pub const GC_PER_UMOL: f64 = 12.011e-6;

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

/// Columns of `daily.csv`, `monthly.csv` and `annual.csv`: name, unit, meaning.
pub const PERIOD_COLUMNS: &[(&str, &str, &str)] = &[
    ("period", "YYYY-MM-DD, YYYY-MM or YYYY", "the period"),
    ("steps", "count", "steps in the period"),
    ("filled_steps", "count", "steps with a gap-filled driver"),
    (
        "missing_steps",
        "count",
        "steps left empty (long gaps); not in the sums",
    ),
    ("gpp", "gC m-2", "GPP summed over the period"),
    ("gpp_c3", "gC m-2", "C3 GPP summed over the period"),
    ("gpp_c4", "gC m-2", "C4 GPP summed over the period"),
    ("c4_share", "-", "gpp_c4 / gpp"),
    (
        "discrimination",
        "permil",
        "GPP-weighted ecosystem discrimination",
    ),
    (
        "discrimination_c3",
        "permil",
        "GPP-weighted discrimination of the C3 part",
    ),
    (
        "discrimination_c4",
        "permil",
        "GPP-weighted discrimination of the C4 part",
    ),
    (
        "d13c_assimilate",
        "permil VPDB",
        "GPP-weighted d13C of the assimilate",
    ),
    ("ci_ca_c3", "-", "GPP-weighted ci/ca of the C3 part"),
    ("ci_ca_c4", "-", "GPP-weighted ci/ca of the C4 part"),
    ("t_air", "degC", "mean air temperature"),
    ("vpd", "kPa", "mean VPD"),
    ("ppfd", "umol m-2 s-1", "mean PPFD"),
    ("precip", "mm", "precipitation summed"),
    ("transpiration", "mm", "transpiration summed"),
    ("soil_evaporation", "mm", "soil evaporation summed"),
    ("beta", "-", "mean soil-water factor"),
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
        let parse = |flag: &str, s: &Option<String>| -> Result<Option<LocalTime>> {
            s.as_deref()
                .map(|d| {
                    LocalTime::parse_date(d).map_err(|e| {
                        Error::msg(format!("--{flag} `{d}`: {e} (expected YYYY-MM-DD)"))
                    })
                })
                .transpose()
        };
        let from = parse("from", &args.from)?;
        // --to is inclusive: the reader's end is the next midnight.
        let to = parse("to", &args.to)?.map(|t| t.plus_minutes(24 * 60));
        if let (Some(f), Some(t)) = (from, to)
            && f >= t
        {
            return Err(Error::msg("--from must not be after --to"));
        }
        if args.out.exists() {
            if !args.out.is_dir() {
                return Err(Error::msg(format!(
                    "--out {}: exists and is not a folder",
                    args.out.display()
                )));
            }
            let non_empty = fs::read_dir(&args.out)?.next().is_some();
            if non_empty && !args.overwrite {
                return Err(Error::msg(format!(
                    "--out {}: the folder exists and is not empty; pass --overwrite to replace it",
                    args.out.display()
                )));
            }
        }
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
        let started = Instant::now();
        let tmp = sibling(&self.out, "tmp");
        if tmp.exists() {
            fs::remove_dir_all(&tmp)?;
        }
        fs::create_dir_all(&tmp)
            .with_context(|| format!("cannot create the folder {}", tmp.display()))?;
        let result = self.run_into(&tmp, started);
        match result {
            Ok(summary) => {
                replace_dir(&tmp, &self.out, self.overwrite)?;
                if !self.quiet {
                    print!("{summary}");
                }
                Ok(())
            }
            Err(e) => {
                let _ = fs::remove_dir_all(&tmp);
                Err(e)
            }
        }
    }

    fn run_into(&self, dir: &Path, started: Instant) -> Result<String> {
        let site = &self.site;
        let mut model = SiteModel::new(site.settings.clone())?;
        let mut reader = ForcingReader::open(
            &site.file.forcing,
            &site.dir(),
            site.file.site.elevation_m,
            self.from,
            self.to,
        )
        .with_context(|| format!("site {}", site.path.display()))?;
        let step_minutes = reader.report().step_minutes;
        let step_s = f64::from(step_minutes) * 60.0;
        let mut steps = AtomicFile::create(&dir.join("steps.csv"))?;
        let header: Vec<&str> = STEP_COLUMNS.iter().map(|c| c.0).collect();
        writeln!(steps.writer(), "{}", header.join(","))?;
        let mut periods = [
            Aggregator::new(PeriodKind::Daily),
            Aggregator::new(PeriodKind::Monthly),
            Aggregator::new(PeriodKind::Annual),
        ];
        let mut line = String::with_capacity(512);
        let has = |p: Pathway| {
            site.settings
                .vegetation
                .iter()
                .position(|v| v.pathway() == p)
        };
        let (i3, i4) = (has(Pathway::C3), has(Pathway::C4));
        for item in &mut reader {
            let f = item.with_context(|| format!("site {}", site.path.display()))?;
            let drivers = self.drivers(&f, step_minutes)?;
            let result = match (&drivers, f.missing) {
                (Some(d), false) => Some(
                    model
                        .step(d)
                        .with_context(|| format!("{}: step {}", site.path.display(), f.time))?,
                ),
                _ => None,
            };
            line.clear();
            write_step(&mut line, &f, drivers.as_ref(), result.as_ref(), i3, i4);
            steps.writer().write_all(line.as_bytes())?;
            for p in &mut periods {
                p.add(&f, drivers.as_ref(), result.as_ref(), i3, i4, step_s, dir)?;
            }
        }
        steps.commit()?;
        let mut annual_rows = Vec::new();
        for (p, on) in periods.iter_mut().zip(site.aggregates) {
            p.flush();
            if on {
                p.write(dir)?;
            }
        }
        annual_rows.extend(periods[2].rows.iter().cloned());
        let report = reader.report();
        let summary = summary(site, &annual_rows, &report, dir, &self.out);
        self.write_log(dir, &report, started)?;
        Ok(summary)
    }

    fn drivers(&self, f: &ForcingStep, step_minutes: u32) -> Result<Option<SiteDrivers>> {
        if f.missing {
            return Ok(None);
        }
        let site = &self.site;
        let pick = |constant: Option<f64>, col: Option<f64>| -> Option<f64> {
            constant.or(col).filter(|v| v.is_finite())
        };
        let (Some(co2), Some(d13c)) = (
            pick(site.co2, f.co2_umol_mol),
            pick(site.d13c_co2, f.d13c_co2_permil),
        ) else {
            return Ok(None);
        };
        let lai = if site.lai_from_forcing {
            match f.lai {
                Some(l) if l.is_finite() => Some(l),
                _ => return Ok(None),
            }
        } else {
            None
        };
        let hour_start = f.time.hour_fraction();
        Ok(Some(SiteDrivers {
            year: f.time.year(),
            day_of_year: f.time.day_of_year(),
            hour_start,
            hour_end: (hour_start + f64::from(step_minutes) / 60.0).min(24.0),
            t_air_c: f.t_air_c,
            vpd_kpa: f.vpd_kpa,
            sw_w_m2: f.sw_w_m2,
            ppfd_umol_m2_s: f.ppfd_umol_m2_s,
            co2_umol_mol: co2,
            d13c_co2_permil: d13c,
            o2_mmol_mol: site.o2,
            pressure_kpa: f.pressure_kpa,
            precip_mm: f.precip_mm,
            swc_m3_m3: f.swc_m3_m3,
            lai_m2_m2: lai,
            wind_m_s: f.wind_m_s,
        }))
    }

    fn write_log(&self, dir: &Path, report: &ForcingReport, started: Instant) -> Result<()> {
        let site = &self.site;
        let forcing_path = &report.path;
        let forcing_bytes = fs::read(forcing_path)
            .with_context(|| format!("cannot read {}", forcing_path.display()))?;
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
                    .map(|s| (s.name.to_string(), json_num(v.leaf.get(s.name).unwrap_or(f64::NAN))))
                    .collect();
                (
                    v.pathway().as_str().to_string(),
                    serde_json::json!({
                        "cover": v.cover,
                        "lai": if site.lai_from_forcing { "forcing".into() } else { json_num(v.lai_m2_m2) },
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
                    "notes": report.notes,
                },
                "output": {"daily": site.aggregates[0], "monthly": site.aggregates[1], "annual": site.aggregates[2]},
                "from": self.from.map(|t| t.to_string()),
                "to_exclusive": self.to.map(|t| t.to_string()),
            },
            "inputs": {
                "site_file": {"path": site.path.display().to_string(), "fnv1a64": fnv1a64(site.text.as_bytes())},
                "forcing": {"path": forcing_path.display().to_string(), "fnv1a64": fnv1a64(&forcing_bytes)},
            },
            "gaps": {
                "rows_read": report.rows_read,
                "steps": report.steps,
                "filled_values": gaps,
                "missing_steps": report.missing_steps,
                "night_radiation_zeroed": report.night_radiation_zeroed,
            },
            "units": {"steps.csv": units(STEP_COLUMNS), "periods": units(PERIOD_COLUMNS)},
            "wall_time_s": started.elapsed().as_secs_f64(),
        });
        let mut f = AtomicFile::create(&dir.join("run.json"))?;
        serde_json::to_writer_pretty(f.writer(), &log)?;
        writeln!(f.writer())?;
        f.commit()
    }
}

/// FNV-1a 64-bit hash of the bytes, as 16 hex digits: a checksum to tell whether an input changed.
pub fn fnv1a64(bytes: &[u8]) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in bytes {
        h ^= u64::from(*b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

fn sibling(dir: &Path, tag: &str) -> PathBuf {
    let name = dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    dir.with_file_name(format!(".{name}.{tag}-{}", std::process::id()))
}

/// Puts the finished folder `tmp` in place of `out`. An existing `out` is first moved aside and
/// removed only after the new one is in place.
fn replace_dir(tmp: &Path, out: &Path, overwrite: bool) -> Result<()> {
    if out.exists() {
        let old = sibling(out, "old");
        if !overwrite && fs::read_dir(out)?.next().is_some() {
            return Err(Error::msg(format!(
                "{} appeared during the run; results left in {}",
                out.display(),
                tmp.display()
            )));
        }
        fs::rename(out, &old).with_context(|| format!("cannot move {} aside", out.display()))?;
        fs::rename(tmp, out)
            .with_context(|| format!("cannot move the results into {}", out.display()))?;
        fs::remove_dir_all(&old).with_context(|| format!("cannot remove {}", old.display()))?;
    } else {
        if let Some(parent) = out.parent().filter(|p| !p.as_os_str().is_empty()) {
            fs::create_dir_all(parent)?;
        }
        fs::rename(tmp, out)
            .with_context(|| format!("cannot move the results into {}", out.display()))?;
    }
    Ok(())
}

fn write_step(
    line: &mut String,
    f: &ForcingStep,
    d: Option<&SiteDrivers>,
    s: Option<&SiteStep>,
    i3: Option<usize>,
    i4: Option<usize>,
) {
    let nan = f64::NAN;
    let _ = write!(line, "{}", f.time);
    let co2 = d.map_or(f.co2_umol_mol.unwrap_or(nan), |d| d.co2_umol_mol);
    let d13c = d.map_or(f.d13c_co2_permil.unwrap_or(nan), |d| d.d13c_co2_permil);
    let lai = |i: Option<usize>| match (i, s) {
        (Some(i), Some(s)) => s.pathways[i].lai_m2_m2,
        _ => nan,
    };
    let part = |i: Option<usize>, g: fn(&isodisc_model::site::PathwayStep) -> f64| match (i, s) {
        (Some(i), Some(s)) => g(&s.pathways[i]),
        _ => nan,
    };
    let sv = |g: fn(&SiteStep) -> f64| s.map_or(nan, g);
    let values = [
        f.t_air_c,
        f.vpd_kpa,
        f.sw_w_m2,
        f.ppfd_umol_m2_s,
        co2,
        d13c,
        f.pressure_kpa,
        f.precip_mm,
        lai(i3),
        lai(i4),
        sv(|s| s.beta),
        sv(|s| s.gpp_umol_m2_s),
        part(i3, |p| p.gpp_umol_m2_s),
        part(i4, |p| p.gpp_umol_m2_s),
        sv(|s| s.c4_share),
        part(i3, |p| p.canopy.ci_ca),
        part(i4, |p| p.canopy.ci_ca),
        part(i3, |p| p.canopy.discrimination_permil),
        part(i4, |p| p.canopy.discrimination_permil),
        sv(|s| s.discrimination_permil),
        sv(|s| s.d13c_assimilate_permil),
        sv(|s| s.transpiration_mm),
        sv(|s| s.soil_evaporation_mm),
        sv(|s| s.soil_water_mm),
    ];
    for v in values {
        line.push(',');
        fmt_num(line, v);
    }
    let _ = write!(line, ",{},{}", u8::from(f.filled), u8::from(s.is_none()));
    line.push('\n');
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PeriodKind {
    Daily,
    Monthly,
    Annual,
}

impl PeriodKind {
    fn key(self, t: LocalTime) -> String {
        match self {
            PeriodKind::Daily => t.date().to_string(),
            PeriodKind::Monthly => format!("{:04}-{:02}", t.year(), t.month()),
            PeriodKind::Annual => format!("{:04}", t.year()),
        }
    }

    fn file(self) -> &'static str {
        match self {
            PeriodKind::Daily => "daily.csv",
            PeriodKind::Monthly => "monthly.csv",
            PeriodKind::Annual => "annual.csv",
        }
    }
}

/// Running sums of one period.
#[derive(Debug, Clone, Default)]
struct Sums {
    steps: usize,
    filled: usize,
    missing: usize,
    gpp: f64,
    gpp_c3: f64,
    gpp_c4: f64,
    w_disc: f64,
    w_disc_c3: f64,
    w_disc_c4: f64,
    w_d13c: f64,
    w_cica_c3: f64,
    w_cica_c4: f64,
    t_air: f64,
    vpd: f64,
    ppfd: f64,
    n_drivers: usize,
    precip: f64,
    transpiration: f64,
    soil_evaporation: f64,
    beta: f64,
    n_model: usize,
}

impl Sums {
    fn row(&self) -> Vec<f64> {
        let ratio = |a: f64, b: f64| if b > 0.0 { a / b } else { f64::NAN };
        let mean = |a: f64, n: usize| if n > 0 { a / n as f64 } else { f64::NAN };
        vec![
            self.steps as f64,
            self.filled as f64,
            self.missing as f64,
            self.gpp,
            self.gpp_c3,
            self.gpp_c4,
            ratio(self.gpp_c4, self.gpp),
            ratio(self.w_disc, self.gpp),
            ratio(self.w_disc_c3, self.gpp_c3),
            ratio(self.w_disc_c4, self.gpp_c4),
            ratio(self.w_d13c, self.gpp),
            ratio(self.w_cica_c3, self.gpp_c3),
            ratio(self.w_cica_c4, self.gpp_c4),
            mean(self.t_air, self.n_drivers),
            mean(self.vpd, self.n_drivers),
            mean(self.ppfd, self.n_drivers),
            self.precip,
            self.transpiration,
            self.soil_evaporation,
            mean(self.beta, self.n_model),
        ]
    }
}

/// A finished period: its key and values in the order of `PERIOD_COLUMNS` after `period`.
#[derive(Debug, Clone)]
pub struct PeriodRow {
    /// The period key.
    pub key: String,
    /// Values.
    pub values: Vec<f64>,
}

struct Aggregator {
    kind: PeriodKind,
    current: Option<(String, Sums)>,
    rows: Vec<PeriodRow>,
}

impl Aggregator {
    fn new(kind: PeriodKind) -> Self {
        Self {
            kind,
            current: None,
            rows: Vec::new(),
        }
    }

    #[allow(clippy::too_many_arguments)]
    fn add(
        &mut self,
        f: &ForcingStep,
        d: Option<&SiteDrivers>,
        s: Option<&SiteStep>,
        i3: Option<usize>,
        i4: Option<usize>,
        step_s: f64,
        _dir: &Path,
    ) -> Result<()> {
        let key = self.kind.key(f.time);
        if self.current.as_ref().is_none_or(|(k, _)| *k != key) {
            self.flush();
            self.current = Some((key, Sums::default()));
        }
        let (_, sums) = self.current.as_mut().expect("set above");
        sums.steps += 1;
        sums.filled += usize::from(f.filled);
        let (Some(_), Some(s)) = (d, s) else {
            sums.missing += 1;
            return Ok(());
        };
        let to_gc = step_s * GC_PER_UMOL;
        let g = s.gpp_umol_m2_s * to_gc;
        sums.gpp += g;
        if g > 0.0 {
            sums.w_disc += g * s.discrimination_permil;
            sums.w_d13c += g * s.d13c_assimilate_permil;
        }
        for (idx, gpp_part, w_disc, w_cica) in [
            (
                i3,
                &mut sums.gpp_c3,
                &mut sums.w_disc_c3,
                &mut sums.w_cica_c3,
            ),
            (
                i4,
                &mut sums.gpp_c4,
                &mut sums.w_disc_c4,
                &mut sums.w_cica_c4,
            ),
        ] {
            if let Some(i) = idx {
                let p = &s.pathways[i];
                let gp = p.gpp_umol_m2_s * to_gc;
                *gpp_part += gp;
                if gp > 0.0 {
                    *w_disc += gp * p.canopy.discrimination_permil;
                    *w_cica += gp * p.canopy.ci_ca;
                }
            }
        }
        sums.t_air += f.t_air_c;
        sums.vpd += f.vpd_kpa;
        sums.ppfd += f.ppfd_umol_m2_s;
        sums.n_drivers += 1;
        sums.precip += f.precip_mm;
        sums.transpiration += s.transpiration_mm;
        sums.soil_evaporation += s.soil_evaporation_mm;
        sums.beta += s.beta;
        sums.n_model += 1;
        Ok(())
    }

    fn flush(&mut self) {
        if let Some((key, sums)) = self.current.take() {
            self.rows.push(PeriodRow {
                key,
                values: sums.row(),
            });
        }
    }

    fn write(&self, dir: &Path) -> Result<()> {
        let mut f = AtomicFile::create(&dir.join(self.kind.file()))?;
        let header: Vec<&str> = PERIOD_COLUMNS.iter().map(|c| c.0).collect();
        writeln!(f.writer(), "{}", header.join(","))?;
        let mut line = String::new();
        for r in &self.rows {
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
}

fn summary(
    site: &Site,
    annual: &[PeriodRow],
    report: &ForcingReport,
    _dir: &Path,
    out: &Path,
) -> String {
    let col = |name: &str| {
        PERIOD_COLUMNS
            .iter()
            .position(|c| c.0 == name)
            .expect("known column")
            - 1
    };
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
        "{:<6} {:>10} {:>10} {:>10} {:>10} {:>9} {:>7} {:>8}",
        "year", "GPP gC/m2", "Δ C3 ‰", "Δ C4 ‰", "Δ eco ‰", "C4 share", "filled", "missing"
    );
    for r in annual {
        let v = &r.values;
        let _ = writeln!(
            s,
            "{:<6} {:>10} {:>10} {:>10} {:>10} {:>9} {:>7} {:>8}",
            r.key,
            show(v[col("gpp")], 1),
            show(v[col("discrimination_c3")], 2),
            show(v[col("discrimination_c4")], 2),
            show(v[col("discrimination")], 2),
            show(v[col("c4_share")], 3),
            v[col("filled_steps")],
            v[col("missing_steps")],
        );
    }
    let filled: usize = report.filled.values().sum();
    let _ = writeln!(
        s,
        "forcing: {} steps of {} min; {} values gap-filled, {} steps missing, {} night radiation values set to 0",
        report.steps,
        report.step_minutes,
        filled,
        report.missing_steps,
        report.night_radiation_zeroed
    );
    let _ = writeln!(s, "results: {}", out.display());
    s
}
