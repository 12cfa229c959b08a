//! `isodisc leaf`: one leaf under one set of conditions, or one row of output per row of an input CSV
//! (streamed, so response curves and million-row sweeps are practical).

use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

use isodisc_model::ModelError;
use isodisc_model::leaf::{
    BetaTarget, C3Form, ElectronLimit, G1Temperature, LeafConditions, LeafModel, LeafOptions,
    LeafState, Pathway, TemperatureSet,
};
use isodisc_model::water::vpd_from_rh_kpa;

use crate::cli::{
    BetaTargetArg, ElectronArg, FormArg, Format, G1TemperatureArg, LeafArgs, PathwayArg,
    TemperatureSetArg,
};
use crate::commands::blocks::{BlockDone, CsvBlocks, Rows};
use crate::commands::leaf_input::{self, InputColumn};
use crate::error::{Context, Error, Result};
use crate::numfmt::{NumRow, parse_f64, push_num, trim_text};
use crate::output::{AtomicFile, fmt_num, json_num};

/// Valid RH range (%): a little above 100 is sensor overshoot and means saturated air.
const RH_RANGE: (f64, f64) = (0.0, 105.0);

/// A validated `isodisc leaf` invocation.
#[derive(Debug, Clone)]
pub struct LeafPlan {
    model: LeafModel,
    options: LeafOptions,
    base: LeafConditions,
    /// RH (%) given instead of VPD: VPD is computed per row at leaf temperature.
    base_rh: Option<f64>,
    format: Format,
    input: Option<PathBuf>,
    /// `--map NAME=COLUMN`: the input's own column names for conditions.
    maps: Vec<(String, String)>,
    output: Option<PathBuf>,
    list_params: bool,
}

/// Parses `NAME=VALUE` (VALUE may be `inf`).
pub fn parse_assignment(text: &str) -> Result<(String, f64)> {
    let (name, value) = text
        .split_once('=')
        .ok_or_else(|| Error::msg(format!("--set `{text}`: expected NAME=VALUE")))?;
    let v: f64 = value.trim().parse().map_err(|_| {
        Error::msg(format!(
            "--set {name}: `{value}` is not a number (use `inf` for an infinite conductance)"
        ))
    })?;
    Ok((name.trim().to_string(), v))
}

impl LeafPlan {
    /// Validates the arguments: every flag against its range, every `--set` against the parameter
    /// table, before any work starts.
    pub fn from_args(args: &LeafArgs) -> Result<Self> {
        let pathway = match args.pathway {
            PathwayArg::C3 => Pathway::C3,
            PathwayArg::C4 => Pathway::C4,
        };
        if pathway == Pathway::C4 && args.g1_temperature == G1TemperatureArg::GammaStar {
            return Err(Error::msg(
                "--g1-temperature gamma-star is for C3 leaves (Γ* of Rubisco's C3 cycle); \
                 C4 g1 stays constant",
            ));
        }
        let mut model = LeafModel::default_for(pathway);
        for s in &args.set {
            let (name, value) = parse_assignment(s)?;
            model.set(&name, value).with_context(|| {
                format!(
                    "--set {name}={} for the {} leaf",
                    isodisc_model::error::show_value(value),
                    pathway.as_str()
                )
            })?;
        }
        let base = LeafConditions {
            t_leaf_c: args.t_leaf,
            ppfd_umol_m2_s: args.ppfd,
            vpd_kpa: args.vpd.unwrap_or(1.0),
            ca_umol_mol: args.ca,
            pressure_kpa: args.pressure,
            o2_mmol_mol: args.o2,
            d13c_air_permil: args.d13c_air,
            soil_beta: args.soil_beta,
            t_growth_c: args.t_growth,
            d13c_substrate_permil: args.d13c_substrate,
        };
        if let Some(rh) = args.rh {
            check_flag("rh", rh, RH_RANGE.0, RH_RANGE.1, "%")?;
        }
        let with_vpd = LeafConditions {
            vpd_kpa: match args.rh {
                Some(rh) => vpd_from_rh_kpa(base.t_leaf_c, rh),
                None => base.vpd_kpa,
            },
            ..base
        };
        for ((name, unit, min, max), v) in LeafConditions::RANGES.iter().zip(values(&with_vpd)) {
            check_flag(name, v, *min, *max, unit)?;
        }
        if let Some(d) = args.d13c_substrate {
            check_flag("d13c_substrate", d, -100.0, 50.0, "permil")?;
        }
        if let (Some(out), Some(input)) = (&args.output, &args.input) {
            crate::output::check_not_input("--output", out, std::slice::from_ref(input))?;
        }
        Ok(Self {
            model,
            options: LeafOptions {
                electron_limit: match args.electron_limit {
                    ElectronArg::Nadph => ElectronLimit::Nadph,
                    ElectronArg::Atp => ElectronLimit::Atp,
                },
                beta_target: match args.beta_target {
                    BetaTargetArg::Capacity => BetaTarget::Capacity,
                    BetaTargetArg::G1 => BetaTarget::G1,
                    BetaTargetArg::Both => BetaTarget::Both,
                },
                c3_form: match args.discrimination {
                    FormArg::Simple => C3Form::Simple,
                    FormArg::Comprehensive => C3Form::Comprehensive,
                },
                temperature_set: match args.temperature_set {
                    TemperatureSetArg::Acclimated => TemperatureSet::Acclimated,
                    TemperatureSetArg::Fixed => TemperatureSet::Fixed,
                },
                g1_temperature: match args.g1_temperature {
                    G1TemperatureArg::Constant => G1Temperature::Constant,
                    G1TemperatureArg::GammaStar => G1Temperature::GammaStar,
                },
            },
            base,
            base_rh: args.rh,
            format: args.format,
            input: args.input.clone(),
            maps: leaf_input::parse_maps(&args.map)?,
            output: args.output.clone(),
            list_params: args.list_params,
        })
    }

    /// Runs the plan, writing to the output file or standard output.
    pub fn run(&self) -> Result<()> {
        match &self.output {
            Some(path) => {
                let mut f = AtomicFile::create(path)?;
                self.write_to(f.writer())?;
                f.commit()
            }
            None => {
                let stdout = io::stdout();
                let mut w = BufWriter::with_capacity(1 << 16, stdout.lock());
                self.write_to(&mut w)?;
                w.flush()?;
                Ok(())
            }
        }
    }

    fn write_to(&self, w: &mut dyn Write) -> Result<()> {
        if self.list_params {
            return write_params(
                &self.model,
                &self.options,
                self.base.t_growth_c,
                self.format,
                w,
            );
        }
        match &self.input {
            Some(path) => self.run_file(path, w),
            None => {
                let mut c = self.base;
                if let Some(rh) = self.base_rh {
                    c.vpd_kpa = vpd_from_rh_kpa(c.t_leaf_c, rh);
                }
                let s = self.model.solve(&self.options, &c)?;
                write_single(&c, &s, self.format, w)
            }
        }
    }

    fn run_file(&self, path: &Path, w: &mut dyn Write) -> Result<()> {
        let (rows, header) = CsvBlocks::open(path)?;
        if header.is_empty() {
            return Err(Error::msg(format!(
                "{}: the file is empty; expected a header row naming the columns (t_leaf, ppfd, \
                 vpd or rh, ca, ...) and one row per leaf",
                path.display()
            )));
        }
        let columns = leaf_input::map_columns(&header, self.model.pathway(), path, &self.maps)?;
        let has_vpd = columns.contains(&InputColumn::Condition(2));
        let has_rh = columns.contains(&InputColumn::Rh);
        if has_vpd && has_rh {
            return Err(Error::msg(format!(
                "{}: give either a `vpd` or an `rh` column, not both",
                path.display()
            )));
        }
        let param_cols: Vec<(usize, &str)> = columns
            .iter()
            .enumerate()
            .filter_map(|(i, c)| match c {
                InputColumn::Param(n) => Some((i, *n)),
                _ => None,
            })
            .collect();
        // Columns that are neither conditions nor parameters go to the output unchanged, first.
        let pass_cols: Vec<usize> = (0..columns.len())
            .filter(|i| columns[*i] == InputColumn::Pass)
            .collect();
        let pass_names: Vec<&str> = pass_cols.iter().map(|i| header[*i].as_str()).collect();
        let out = RowWriter::new(self.format, &param_cols, &pass_names);
        out.header(w)?;
        let file = InputFile {
            header: &header,
            columns: &columns,
            param_cols: &param_cols,
            pass_cols: &pass_cols,
            out: &out,
        };
        // Blocks of lines are parsed, solved and formatted on all threads; their text goes out
        // in input order, and the first bad row stops the run after the rows before it.
        rows.for_each_block(
            |block| self.solve_block(&file, block),
            |_, text: Vec<u8>| Ok(w.write_all(&text)?),
        )?;
        out.finish(w)
    }

    /// Solves and formats the rows of one block of lines: their text up to the first bad row,
    /// and that row's line in the block and message.
    fn solve_block(&self, file: &InputFile<'_>, block: &[u8]) -> BlockDone<Vec<u8>> {
        let n = file.columns.len();
        let mut text = Vec::with_capacity(block.len() * 8);
        let mut model = self.model.clone();
        let mut params = Vec::with_capacity(file.param_cols.len());
        let mut cells = Vec::with_capacity(n);
        let mut nums_text = NumRow::new(LeafConditions::RANGES.len() + file.param_cols.len() + 9);
        let mut rows = Rows::new(block);
        let error = loop {
            let Some((at, row)) = rows.next_cells(&mut cells, n) else {
                break None;
            };
            if let Err(why) = row {
                break Some((at, why));
            }
            let pass_cell = |i: usize| std::str::from_utf8(trim_text(&cells[i]));
            if let Some(&i) = file.pass_cols.iter().find(|&&i| pass_cell(i).is_err()) {
                let name = &file.header[i];
                break Some((at, format!(", column {} (`{name}`): not UTF-8 text", i + 1)));
            }
            let (c, state) = match self.solve_row(file, &mut model, &mut params, &cells) {
                Ok(r) => r,
                Err(rest) => break Some((at, rest)),
            };
            let pass = file.pass_cols.iter().map(|&i| pass_cell(i).unwrap_or(""));
            if let Err(e) = file
                .out
                .row(&mut text, &mut nums_text, &c, &params, &state, pass)
            {
                break Some((at, format!(": {e}")));
            }
        };
        BlockDone {
            out: text,
            lines: rows.lines_seen(),
            error,
        }
    }

    /// One input row: its conditions and the solved leaf, or the message after `line N` that
    /// names the column.
    fn solve_row(
        &self,
        file: &InputFile<'_>,
        model: &mut LeafModel,
        params: &mut Vec<f64>,
        cells: &[std::borrow::Cow<'_, [u8]>],
    ) -> std::result::Result<(LeafConditions, LeafState), String> {
        let header = file.header;
        let mut vals = values(&self.base);
        let mut rh = self.base_rh;
        for (i, col) in file.columns.iter().enumerate() {
            if *col == InputColumn::Pass {
                continue;
            }
            let field = trim_text(&cells[i]);
            if field.is_empty() {
                continue;
            }
            let v = parse_f64(field).ok_or_else(|| {
                format!(
                    ", column {} (`{}`): `{}` is not a number",
                    i + 1,
                    &header[i],
                    String::from_utf8_lossy(field)
                )
            })?;
            match col {
                InputColumn::Condition(k) => {
                    vals[*k] = v;
                    if *k == 2 {
                        rh = None;
                    }
                }
                InputColumn::Rh => {
                    check_cell(i, &header[i], v, RH_RANGE.0, RH_RANGE.1, "%")?;
                    rh = Some(v);
                }
                InputColumn::Param(name) => {
                    model
                        .set(name, v)
                        .map_err(|e| cell_error(i, &header[i], e))?;
                }
                InputColumn::Pass => {}
            }
        }
        params.clear();
        params.extend(
            file.param_cols
                .iter()
                .map(|(_, n)| model.get(n).unwrap_or(f64::NAN)),
        );
        let mut c = from_values(vals, self.base.d13c_substrate_permil);
        if let Some(rh) = rh {
            c.vpd_kpa = vpd_from_rh_kpa(c.t_leaf_c, rh);
        }
        let state = model.solve(&self.options, &c).map_err(|e| {
            let col = match &e {
                ModelError::InvalidInput { name, .. } => header
                    .iter()
                    .position(|h| h == name || (name == "vpd" && h == "rh")),
                _ => None,
            };
            match col {
                Some(i) => cell_error(i, &header[i], e),
                None => format!(": {e}"),
            }
        })?;
        if !file.param_cols.is_empty() {
            *model = self.model.clone();
        }
        Ok((c, state))
    }
}

/// What the rows of one `leaf --input` file share: its header and what each column does.
struct InputFile<'a> {
    header: &'a [String],
    columns: &'a [InputColumn],
    param_cols: &'a [(usize, &'a str)],
    pass_cols: &'a [usize],
    out: &'a RowWriter,
}

/// The conditions in the order of `LeafConditions::RANGES`.
fn values(c: &LeafConditions) -> [f64; 9] {
    [
        c.t_leaf_c,
        c.ppfd_umol_m2_s,
        c.vpd_kpa,
        c.ca_umol_mol,
        c.pressure_kpa,
        c.o2_mmol_mol,
        c.d13c_air_permil,
        c.soil_beta,
        c.t_growth_c,
    ]
}

fn from_values(v: [f64; 9], d13c_substrate_permil: Option<f64>) -> LeafConditions {
    LeafConditions {
        t_leaf_c: v[0],
        ppfd_umol_m2_s: v[1],
        vpd_kpa: v[2],
        ca_umol_mol: v[3],
        pressure_kpa: v[4],
        o2_mmol_mol: v[5],
        d13c_air_permil: v[6],
        soil_beta: v[7],
        t_growth_c: v[8],
        d13c_substrate_permil,
    }
}

fn check_flag(name: &str, v: f64, min: f64, max: f64, unit: &str) -> Result<()> {
    if v.is_finite() && v >= min && v <= max {
        Ok(())
    } else {
        Err(Error::msg(format!(
            "--{} = {}: valid range is {min} to {max} {unit}",
            name.replace('_', "-"),
            isodisc_model::error::show_value(v)
        )))
    }
}

/// The message after `line N` for a cell outside its range.
fn check_cell(
    col: usize,
    name: &str,
    v: f64,
    min: f64,
    max: f64,
    unit: &str,
) -> std::result::Result<(), String> {
    if v.is_finite() && v >= min && v <= max {
        Ok(())
    } else {
        Err(format!(
            ", column {} (`{name}`): {v} is outside the valid range {min} to {max} {unit}",
            col + 1
        ))
    }
}

/// The message after `line N` for a cell the model refused.
fn cell_error(col: usize, name: &str, e: ModelError) -> String {
    format!(", column {} (`{name}`): {e}", col + 1)
}

/// Output columns after the conditions: (name, unit).
const RESULT_COLUMNS: &[(&str, &str)] = &[
    ("a_net", "umol m-2 s-1"),
    ("rd", "umol m-2 s-1"),
    ("g_s", "mol m-2 s-1"),
    ("c_s", "umol mol-1"),
    ("c_i", "umol mol-1"),
    ("c_c", "umol mol-1"),
    ("ci_ca", "-"),
    ("discrimination", "permil"),
    ("d13c_assimilate", "permil"),
    ("limitation", "-"),
];

fn result_values(s: &LeafState) -> [f64; 9] {
    [
        s.a_net,
        s.rd,
        s.g_s,
        s.c_s,
        s.c_i,
        s.c_c,
        s.ci_ca,
        s.discrimination,
        s.d13c_assimilate,
    ]
}

fn write_single(
    c: &LeafConditions,
    s: &LeafState,
    format: Format,
    w: &mut dyn Write,
) -> Result<()> {
    let inputs = LeafConditions::RANGES
        .iter()
        .map(|r| (r.0, r.1))
        .zip(values(c));
    let results = RESULT_COLUMNS.iter().copied().zip(result_values(s));
    match format {
        Format::Table => {
            writeln!(w, "{:<16} {:>12}  unit", "quantity", "value")?;
            for ((name, unit), v) in inputs.chain(results) {
                let mut b = String::new();
                fmt_num(&mut b, v);
                if b.is_empty() {
                    b.push('-');
                }
                writeln!(w, "{name:<16} {b:>12}  {unit}")?;
            }
            writeln!(w, "{:<16} {:>12}", "limitation", s.limitation.as_str())?;
        }
        Format::Csv | Format::Json => {
            let out = RowWriter::new(format, &[], &[]);
            out.header(w)?;
            let mut text = Vec::new();
            out.row(
                &mut text,
                &mut NumRow::new(0),
                c,
                &[],
                s,
                std::iter::empty(),
            )?;
            w.write_all(&text)?;
            out.finish(w)?;
        }
    }
    Ok(())
}

/// Streams output rows in one of the formats.
struct RowWriter {
    format: Format,
    /// Pass-through columns, written first.
    pass_names: Vec<String>,
    names: Vec<String>,
}

impl RowWriter {
    fn new(format: Format, params: &[(usize, &str)], pass: &[&str]) -> Self {
        let names = LeafConditions::RANGES
            .iter()
            .map(|r| r.0.to_string())
            .chain(params.iter().map(|(_, n)| n.to_string()))
            .chain(RESULT_COLUMNS.iter().map(|r| r.0.to_string()))
            .collect();
        Self {
            format,
            pass_names: pass.iter().map(|p| p.to_string()).collect(),
            names,
        }
    }

    fn header(&self, w: &mut dyn Write) -> Result<()> {
        match self.format {
            Format::Csv => {
                let mut line = Vec::new();
                for n in &self.pass_names {
                    leaf_input::push_csv_cell(&mut line, n);
                    line.push(b',');
                }
                w.write_all(&line)?;
                writeln!(w, "{}", self.names.join(","))?
            }
            Format::Table => {
                // A space before every cell keeps long names and numbers apart.
                for n in self.pass_names.iter().chain(&self.names) {
                    write!(w, " {n:>15}")?;
                }
                writeln!(w)?;
            }
            Format::Json => {}
        }
        Ok(())
    }

    /// Appends one row's text to `out`.
    fn row<'p>(
        &self,
        out: &mut Vec<u8>,
        nums_text: &mut NumRow,
        c: &LeafConditions,
        params: &[f64],
        s: &LeafState,
        pass: impl IntoIterator<Item = &'p str>,
    ) -> Result<()> {
        let nums = values(c)
            .into_iter()
            .chain(params.iter().copied())
            .chain(result_values(s));
        match self.format {
            Format::Csv => {
                for cell in pass {
                    leaf_input::push_csv_cell(out, cell);
                    out.push(b',');
                }
                nums_text.clear();
                let mut col = 0;
                for part in [&values(c)[..], params, &result_values(s)[..]] {
                    for &v in part {
                        nums_text.push(col, v);
                        nums_text.push_byte(b',');
                        col += 1;
                    }
                }
                out.extend_from_slice(nums_text.as_bytes());
                out.extend_from_slice(s.limitation.as_str().as_bytes());
                out.push(b'\n');
            }
            Format::Table => {
                for cell in pass {
                    out.extend_from_slice(format!(" {cell:>15}").as_bytes());
                }
                for v in nums {
                    let start = out.len();
                    push_num(out, v);
                    let width = out.len() - start;
                    if width == 0 {
                        out.push(b'-');
                    }
                    let pad = 1 + 15usize.saturating_sub(width.max(1));
                    out.splice(start..start, std::iter::repeat_n(b' ', pad));
                }
                out.extend_from_slice(format!(" {:>15}", s.limitation.as_str()).as_bytes());
                out.push(b'\n');
            }
            Format::Json => {
                let mut obj = serde_json::Map::new();
                for (name, cell) in self.pass_names.iter().zip(pass) {
                    obj.insert(name.clone(), cell.into());
                }
                for (name, v) in self.names.iter().zip(nums) {
                    obj.insert(name.clone(), json_num(v));
                }
                obj.insert("limitation".into(), s.limitation.as_str().into());
                serde_json::to_writer(&mut *out, &obj)?;
                out.push(b'\n');
            }
        }
        Ok(())
    }

    fn finish(&self, w: &mut dyn Write) -> Result<()> {
        w.flush()?;
        Ok(())
    }
}

/// Every parameter with its default (`auto` where a setting chooses it), the value in use under
/// the given flags and `--set`s, unit, range, description and source.
fn write_params(
    model: &LeafModel,
    options: &LeafOptions,
    t_growth_c: f64,
    format: Format,
    w: &mut dyn Write,
) -> Result<()> {
    let pathway = model.pathway();
    let specs = pathway.specs();
    let show = |v: f64| -> String {
        if v.is_nan() {
            "auto".into()
        } else if v.is_finite() {
            // Nine decimals drop the binary noise of products such as 1.715 × 60.
            ((v * 1e9).round() / 1e9).to_string()
        } else {
            v.to_string()
        }
    };
    let in_use = |name: &str| model.in_use(name, options, t_growth_c).unwrap_or(f64::NAN);
    match format {
        Format::Table => {
            writeln!(w, "{} leaf parameters", pathway.as_str().to_uppercase())?;
            writeln!(
                w,
                "{:<14} {:>10} {:>10} {:<24} {:>10} {:>10}  description; source",
                "name", "default", "in use", "unit", "min", "max"
            )?;
            for s in specs {
                writeln!(
                    w,
                    "{:<14} {:>10} {:>10} {:<24} {:>10} {:>10}  {}; {}",
                    s.name,
                    show(s.default),
                    show(in_use(s.name)),
                    s.unit,
                    s.min,
                    s.max,
                    s.description,
                    s.source
                )?;
            }
        }
        Format::Csv => {
            let mut cw = csv::Writer::from_writer(w);
            cw.write_record([
                "name",
                "default",
                "in_use",
                "unit",
                "min",
                "max",
                "description",
                "source",
            ])?;
            for s in specs {
                cw.write_record([
                    s.name,
                    &show(s.default),
                    &show(in_use(s.name)),
                    s.unit,
                    &s.min.to_string(),
                    &s.max.to_string(),
                    s.description,
                    s.source,
                ])?;
            }
            cw.flush()?;
        }
        Format::Json => {
            let num_or_inf = |v: f64| {
                if v.is_infinite() {
                    "inf".into()
                } else {
                    json_num(v)
                }
            };
            let list: Vec<_> = specs
                .iter()
                .map(|s| {
                    serde_json::json!({
                        "name": s.name,
                        "default": if s.default.is_nan() { "auto".into() } else { num_or_inf(s.default) },
                        "in_use": num_or_inf(in_use(s.name)),
                        "unit": s.unit,
                        "min": json_num(s.min), "max": num_or_inf(s.max),
                        "description": s.description, "source": s.source,
                    })
                })
                .collect();
            writeln!(w, "{}", serde_json::to_string_pretty(&list)?)?;
        }
    }
    Ok(())
}
