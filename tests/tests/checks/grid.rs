//! Gridded runs from NetCDF weather (`isodisc grid`, runner/src/grid, runner/src/netcdf_in):
//! a cell equals `isodisc run` on its exported site and weather; packed and unpacked copies of
//! the weather agree within the packing's resolution; NetCDF-4 and classic copies give the same
//! run bit for bit; shards merged equal one run byte for byte,
//! and so does a resumed run; CF time decoding equals cftime; bad input names its place.

use std::path::{Path, PathBuf};

use isodisc_runner::forcing::LocalTime;
use isodisc_runner::grid::{GRID_FIELDS, Grid};
use isodisc_runner::netcdf_in::cf_time::{Calendar, TimeUnits};
use isodisc_runner::simulate::{NoSink, period_col, simulate};
use isodisc_runner::site::Site;
use netcdf3::{DataSet, FileWriter, Version};

use crate::common::{demo_path, run};

/// Same model, same steps: the values agree to rounding of the last bits (the exported weather is
/// written with the shortest text that reads back as the same number).
const SAME_RUN_TOL: f64 = 1e-9;

fn grid_file() -> PathBuf {
    demo_path("grid/grid.toml")
}

/// The demo grid file with another weather file, written into `dir` with absolute paths.
fn demo_variant(dir: &Path, forcing: &str) -> PathBuf {
    let abs = |f: &str| demo_path("grid").join(f).to_str().unwrap().to_string();
    let text = std::fs::read_to_string(grid_file())
        .unwrap()
        .replace(
            r#"files = ["forcing_2001a.nc", "forcing_2001b.nc"]"#,
            &format!("files = [{:?}]", abs(forcing)),
        )
        .replace(r#""cover.nc""#, &format!("{:?}", abs("cover.nc")));
    let path = dir.join("variant.toml");
    std::fs::write(&path, text).unwrap();
    path
}

fn jan_to_mar() -> (Option<LocalTime>, Option<LocalTime>) {
    (
        Some(LocalTime::parse_date("2001-01-01").unwrap()),
        Some(LocalTime::parse_date("2001-04-01").unwrap()),
    )
}

/// `isodisc run`'s path, in process and at full precision: the site file, the CSV weather reader,
/// the simulation; the monthly values `[field][month]`.
fn run_site(site: &Path, months: &[(i32, u32)]) -> Vec<f64> {
    let site = Site::load(site).unwrap();
    let mut reader = site.weather(None, None).unwrap();
    let step = reader.report().step_minutes;
    let sim = simulate(&site, &mut reader, step, &mut NoSink).unwrap();
    let nm = months.len();
    let mut out = vec![f64::NAN; GRID_FIELDS.len() * nm];
    for row in &sim.periods[1] {
        let m = months
            .iter()
            .position(|(y, mo)| format!("{y:04}-{mo:02}") == row.key)
            .unwrap();
        for (f, name) in GRID_FIELDS.iter().enumerate() {
            out[f * nm + m] = row.values[period_col(name)];
        }
    }
    out
}

fn assert_same(a: &[f64], b: &[f64], tol: f64, what: &str) {
    assert_eq!(a.len(), b.len(), "{what}");
    let nm = a.len() / GRID_FIELDS.len();
    for (k, (x, y)) in a.iter().zip(b).enumerate() {
        let field = GRID_FIELDS[k / nm];
        assert!(
            (x.is_nan() && y.is_nan()) || (x - y).abs() <= tol * (1.0 + y.abs()),
            "{what}: {field} month {}: {x} vs {y}",
            k % nm
        );
    }
}

/// A cell of the grid equals `isodisc run` on the site file and weather CSV that `--export` writes
/// for it, every monthly value of every field (common practice: the grid promises the site
/// model; the export is how a user checks it). Four cells across the C3/C4 gradient, a year.
#[test]
fn each_cell_equals_isodisc_run_on_its_export() {
    let grid = Grid::load(&grid_file(), None, None).unwrap();
    let tmp = tempfile::tempdir().unwrap();
    let picks = [0, 20, 41, grid.land.len() - 1];
    for k in picks {
        let cell = grid.land[k];
        let from_grid = grid.run_cell(cell).unwrap();
        let dir = tmp.path().join(format!("cell{k}"));
        grid.export_cell(cell, &dir).unwrap();
        let from_run = run_site(&dir.join("site.toml"), &grid.months);
        assert!(from_grid.iter().filter(|v| v.is_finite()).count() > 80);
        assert_same(&from_grid, &from_run, SAME_RUN_TOL, &format!("cell {cell}"));
    }
    // The exported site file runs through the command too.
    let dir = tmp.path().join("cmd");
    run(&[
        "grid",
        grid_file().to_str().unwrap(),
        "--cell",
        "37.25,4.25",
        "--export",
        dir.to_str().unwrap(),
        "--quiet",
    ])
    .unwrap();
    crate::common::run_quiet(&dir.join("site.toml"), &tmp.path().join("run")).unwrap();
    assert!(tmp.path().join("run/monthly.csv").is_file());
}

/// Shards 1/2 and 2/2 merged give the same bytes as one run; a run whose block file was removed
/// resumes and gives the same bytes again (common practice: reproducible outputs).
#[test]
fn shards_merged_and_a_resumed_run_equal_one_run_byte_for_byte() {
    let tmp = tempfile::tempdir().unwrap();
    let g = grid_file();
    let g = g.to_str().unwrap();
    let p = |s: &str| tmp.path().join(s).to_str().unwrap().to_string();
    let period = ["--from", "2001-01-01", "--to", "2001-02-28"];
    let with = |extra: &[&str]| {
        let mut a = vec!["grid", g];
        a.extend_from_slice(extra);
        a.extend_from_slice(&period);
        a.push("--quiet");
        run(&a).unwrap();
    };
    with(&["--out", &p("one"), "--threads", "2"]);
    with(&["--out", &p("s1"), "--shard", "1/2"]);
    with(&["--out", &p("s2"), "--shard", "2/2", "--threads", "1"]);
    assert!(!tmp.path().join("s1/priors_grid.nc").exists());
    run(&[
        "merge",
        &p("s1"),
        &p("s2"),
        "--out",
        &p("merged"),
        "--quiet",
    ])
    .unwrap();
    let one = std::fs::read(tmp.path().join("one/priors_grid.nc")).unwrap();
    let merged = std::fs::read(tmp.path().join("merged/priors_grid.nc")).unwrap();
    assert!(one == merged, "merged shards differ from one run");

    // A missing shard is an error naming the block.
    let err = run(&["merge", &p("s1"), "--out", &p("half"), "--quiet"]).unwrap_err();
    assert!(err.contains("block 1 of 2"), "{err}");

    // Resume: remove one block, run again into the same folder.
    std::fs::remove_file(tmp.path().join("one/blocks/000001.bin")).unwrap();
    with(&["--out", &p("one")]);
    assert!(std::fs::read(tmp.path().join("one/priors_grid.nc")).unwrap() == one);

    // Values in the file sit where the cells are; sea is filled.
    let grid = Grid::load(
        &grid_file(),
        jan_to_mar().0,
        Some(LocalTime::parse_date("2001-03-01").unwrap()),
    )
    .unwrap();
    let path = tmp.path().join("one/priors_grid.nc");
    let gpp = isodisc_runner::netcdf_in::open(&path)
        .unwrap()
        .read_values("gpp")
        .unwrap();
    let ncell = grid.forcing.axes.cells();
    let cell = grid.land[5];
    let v = grid.run_cell(cell).unwrap();
    // February GPP in kg C m-2 s-1: the month's sum in g C m-2 / 1000 / 28 days.
    let expected = v[1] * 1e-3 / (28.0 * 86_400.0);
    assert!(
        (gpp[ncell + cell] - expected).abs() <= 1e-6 * expected,
        "February GPP of cell {cell}: {} vs {expected}",
        gpp[ncell + cell]
    );
    assert!(gpp[0].is_nan(), "a sea cell");
}

/// The packed copy (int16 with scale_factor and add_offset, CF 1.8 section 8.1) gives the same
/// weather as the float copy within one packing step (the writer, netCDF4-python, may truncate
/// rather than round), and nearly the same priors.
#[test]
fn packed_and_unpacked_copies_agree() {
    let tmp = tempfile::tempdir().unwrap();
    let packed_toml = demo_variant(tmp.path(), "forcing_2001_packed.nc");
    let (from, to) = jan_to_mar();
    let packed = Grid::load(&packed_toml, from, to).unwrap();
    let plain = Grid::load(&grid_file(), from, to).unwrap();
    // The packing step of each variable in the project's unit (scale_factor from the file;
    // K to °C and Pa to kPa keep or divide the step; kg m-2 s-1 × 10800 s to mm).
    let mut r = netcdf3::FileReader::open(demo_path("grid/forcing_2001_packed.nc")).unwrap();
    let scale = |name: &str| {
        r.data_set()
            .get_var(name)
            .unwrap()
            .get_attr_f64("scale_factor")
            .unwrap()[0]
    };
    let (st, sq, sr, sp, sps) = (
        scale("tas"),
        scale("huss"),
        scale("rsds"),
        scale("pr"),
        scale("ps"),
    );
    let _ = &mut r;
    for &cell in &plain.land[..8] {
        let (i, j) = plain.position(cell);
        let a = plain.forcing.cell_steps(i, j, 200.0).unwrap();
        let b = packed.forcing.cell_steps(i, j, 200.0).unwrap();
        assert_eq!(a.len(), b.len());
        for (x, y) in a.iter().zip(&b) {
            // f32 storage adds a relative 6e-8.
            let near = |p: f64, q: f64, step: f64| (p - q).abs() <= step + 1e-6 * p.abs().max(1.0);
            assert!(
                near(x.t_air_c, y.t_air_c, st),
                "{} {} {}",
                x.time,
                x.t_air_c,
                y.t_air_c
            );
            assert!(near(x.sw_w_m2, y.sw_w_m2, sr), "{}", x.time);
            assert!(near(x.precip_mm, y.precip_mm, sp * 10800.0), "{}", x.time);
            assert!(
                near(x.pressure_kpa, y.pressure_kpa, sps / 1000.0),
                "{}",
                x.time
            );
            assert!(sq > 0.0);
        }
        // Priors: GPP within 0.5 % and discrimination within 0.02 permil (from the runs above:
        // the packing moves temperature by at most 1e-3 K; tolerance common practice).
        let pa = plain.run_cell(cell).unwrap();
        let pb = packed.run_cell(cell).unwrap();
        let nm = plain.months.len();
        for m in 0..nm {
            let (ga, gb) = (pa[m], pb[m]);
            assert!(
                (ga - gb).abs() <= 0.005 * ga.abs() + 1e-6,
                "GPP {ga} vs {gb}"
            );
            let (da, db) = (pa[2 * nm + m], pb[2 * nm + m]);
            assert!((da - db).abs() <= 0.02, "discrimination {da} vs {db}");
        }
    }
}

/// CF time coordinates decode to the dates cftime gives (tests/fixtures/cf_time/cases.csv, made
/// by make_cf_time_fixture.py with cftime 1.6.6.1 num2date): every calendar isodisc reads, each
/// time unit, leap days, the 360-day calendar's 30 February.
#[test]
fn cf_time_decoding_matches_cftime() {
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/cf_time/cases.csv"),
    )
    .unwrap();
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_reader(text.as_bytes());
    let mut n = 0;
    for rec in rdr.records() {
        let rec = rec.unwrap();
        let cal = Calendar::parse(Some(&rec[1])).unwrap();
        let units = TimeUnits::parse(&rec[0], cal).unwrap();
        let value: f64 = rec[2].parse().unwrap();
        let got = units.decode(value).unwrap().to_string();
        assert_eq!(got, &rec[3], "{} {} {}", &rec[0], &rec[1], value);
        n += 1;
    }
    assert!(n >= 50, "{n} cases");
    // Refused: months (a fraction of a year in UDUNITS), the Julian part of the standard
    // calendar, unknown calendars (CF 1.8 section 4.4).
    for (units, cal) in [
        ("months since 2000-01-01", "standard"),
        ("days since 1500-01-01", "standard"),
        ("days since 2000-02-30", "standard"),
    ] {
        let c = Calendar::parse(Some(cal)).unwrap();
        assert!(TimeUnits::parse(units, c).is_err(), "{units}");
    }
    assert!(Calendar::parse(Some("julian")).is_err());
    // A reference time with a zone: 00:00 at UTC+6 is 18:00 UTC the day before (CF 1.8 4.4).
    let u = TimeUnits::parse("hours since 2001-01-02 00:00:00 +06:00", Calendar::Standard).unwrap();
    assert_eq!(u.decode(0.0).unwrap().to_string(), "2001-01-01T18:00:00");
}

/// A small forcing file on a 2 × 2 grid, 16 steps of 3 h, for the error checks.
struct Tiny {
    times: Vec<f64>,
    time_units: String,
    calendar: String,
    tas_units: String,
    tas: Vec<f32>,
    lon: Vec<f64>,
}

impl Tiny {
    fn new() -> Tiny {
        Tiny {
            times: (0..16).map(|i| f64::from(i) * 3.0).collect(),
            time_units: "hours since 2001-01-01 00:00:00".into(),
            calendar: "standard".into(),
            tas_units: "K".into(),
            tas: vec![288.0; 16 * 4],
            lon: vec![10.25, 10.75],
        }
    }

    fn write(&self, path: &Path) {
        let nt = self.times.len();
        let mut ds = DataSet::new();
        ds.add_fixed_dim("time", nt).unwrap();
        ds.add_fixed_dim("lat", 2).unwrap();
        ds.add_fixed_dim("lon", 2).unwrap();
        ds.add_var_f64("time", &["time"]).unwrap();
        ds.add_var_attr_string("time", "units", &self.time_units)
            .unwrap();
        ds.add_var_attr_string("time", "calendar", &self.calendar)
            .unwrap();
        ds.add_var_f64("lat", &["lat"]).unwrap();
        ds.add_var_attr_string("lat", "units", "degrees_north")
            .unwrap();
        ds.add_var_f64("lon", &["lon"]).unwrap();
        ds.add_var_attr_string("lon", "units", "degrees_east")
            .unwrap();
        for (name, units) in [
            ("tas", self.tas_units.as_str()),
            ("huss", "kg kg-1"),
            ("rsds", "W m-2"),
        ] {
            ds.add_var_f32(name, &["time", "lat", "lon"]).unwrap();
            ds.add_var_attr_string(name, "units", units).unwrap();
            ds.add_var_attr_f32(name, "_FillValue", vec![1e20]).unwrap();
        }
        let mut w = FileWriter::open(path).unwrap();
        w.set_def(&ds, Version::Classic, 0).unwrap();
        w.write_var_f64("time", &self.times).unwrap();
        w.write_var_f64("lat", &[45.25, 45.75]).unwrap();
        w.write_var_f64("lon", &self.lon).unwrap();
        w.write_var_f32("tas", &self.tas).unwrap();
        w.write_var_f32("huss", &vec![0.005; nt * 4]).unwrap();
        w.write_var_f32("rsds", &vec![100.0; nt * 4]).unwrap();
        w.close().unwrap();
    }
}

const TINY_GRID: &str = r#"
[forcing]
files = ["tiny.nc"]
[forcing.variables]
t_air = "tas"
specific_humidity = "huss"
sw = "rsds"
[vegetation.c3]
preset = "c3-grass"
cover = COVER
lai = 2.0
[soil]
field_capacity = 0.3
wilting_point = 0.1
root_depth_m = 1.0
initial_water = 0.9
[atmosphere]
co2 = 400.0
d13c_co2 = -8.5
"#;

/// The error of loading (and, if that works, running every cell of) a tiny grid.
fn tiny_error(dir: &Path, tiny: &Tiny, grid_text: &str) -> String {
    tiny.write(&dir.join("tiny.nc"));
    let path = dir.join("grid.toml");
    std::fs::write(&path, grid_text.replace("COVER", "0.8")).unwrap();
    match Grid::load(&path, None, None) {
        Err(e) => e.chain(),
        Ok(g) => {
            for &c in &g.land {
                if let Err(e) = g.run_cell(c) {
                    return e.chain();
                }
            }
            panic!("no error")
        }
    }
}

/// Bad input is refused with the file, variable and index in the message (house rule).
#[test]
fn bad_input_names_file_variable_and_index() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    // A variable the mapping names is absent.
    let e = tiny_error(
        d,
        &Tiny::new(),
        &TINY_GRID.replace(r#"sw = "rsds""#, r#"sw = "rsus""#),
    );
    assert!(
        e.contains("no variable `rsus`") && e.contains("tiny.nc"),
        "{e}"
    );
    // Time going backwards at index 5.
    let mut t = Tiny::new();
    t.times[5] = 3.0;
    let e = tiny_error(d, &t, TINY_GRID);
    assert!(e.contains("tiny.nc, variable `time`, index 5"), "{e}");
    // Units that do not convert to °C.
    let mut t = Tiny::new();
    t.tas_units = "m s-1".into();
    let e = tiny_error(d, &t, TINY_GRID);
    assert!(
        e.contains("variable `tas`: units \"m s-1\" cannot be converted"),
        "{e}"
    );
    // A fill value in a vegetated cell: time index 7, lat 1, lon 0.
    let mut t = Tiny::new();
    t.tas[7 * 4 + 2] = 1e20;
    let e = tiny_error(d, &t, TINY_GRID);
    assert!(
        e.contains(
            "variable `tas`, time index 7 (2001-01-01T21:00), lat index 1 (45.75°), lon index 0"
        ),
        "{e}"
    );
    // A value outside the valid range names the value.
    let mut t = Tiny::new();
    t.tas[3] = 400.0;
    let e = tiny_error(d, &t, TINY_GRID);
    assert!(e.contains("time index 0") && e.contains("126.85"), "{e}");
    // 30 February of a 360_day file: refused with its index (index 59·8 = 472 is 2000-02-30).
    let mut t = Tiny::new();
    t.calendar = "360_day".into();
    t.time_units = "days since 2000-02-29".into();
    t.times = (0..16).map(|i| f64::from(i) * 0.125).collect();
    let e = tiny_error(d, &t, TINY_GRID);
    assert!(
        e.contains("index 8") && e.contains("2000-02-30T00:00:00 (360_day calendar)"),
        "{e}"
    );
    // A noleap file across 29 February 2000: the gap is refused where it is.
    let mut t = Tiny::new();
    t.calendar = "noleap".into();
    t.time_units = "hours since 2000-02-28 12:00".into();
    let e = tiny_error(d, &t, TINY_GRID);
    assert!(
        e.contains("index 4") && e.contains("noleap calendar has no 29 February"),
        "{e}"
    );
    // A cover map on another grid: the longitude that differs is named.
    let mut other = Tiny::new();
    other.lon = vec![10.25, 11.25];
    other.write(&d.join("cover_other.nc"));
    let text = TINY_GRID.replace(
        "cover = COVER",
        r#"cover = { file = "cover_other.nc", variable = "tas" }"#,
    );
    let e = tiny_error(d, &Tiny::new(), &text);
    assert!(
        e.contains("cover_other.nc")
            && e.contains("longitude index 1 is 11.25°")
            && e.contains("grids do not match"),
        "{e}"
    );
    // A file that is not NetCDF is named as such.
    std::fs::write(d.join("tiny.txt"), "time,tas\n").unwrap();
    let text = TINY_GRID.replace(r#"["tiny.nc"]"#, r#"["tiny.txt"]"#);
    let e = tiny_error(d, &Tiny::new(), &text);
    assert!(e.contains("tiny.txt: not a NetCDF file"), "{e}");
}

/// The NetCDF-4 copy of the demo weather (HDF5, deflate and shuffle filters, chunks of 100 × 3 × 4
/// that do not divide the 8 × 10 grid; written by netCDF4-python from the same float32 values)
/// gives every cell the same weather and the same monthly values, bit for bit, as the classic
/// files (common practice: the storage format carries no information). Windows of several cells
/// give the same steps as one cell read alone.
#[test]
fn netcdf4_and_classic_copies_give_the_same_run() {
    let tmp = tempfile::tempdir().unwrap();
    let nc4_toml = demo_variant(tmp.path(), "forcing_2001_nc4.nc");
    let (from, to) = (
        jan_to_mar().0,
        Some(LocalTime::parse_date("2001-03-01").unwrap()),
    );
    let nc4 = Grid::load(&nc4_toml, from, to).unwrap();
    let classic = Grid::load(&grid_file(), from, to).unwrap();
    assert_eq!(nc4.land, classic.land);
    assert_eq!(nc4.forcing.times, classic.forcing.times);
    assert_eq!(nc4.forcing.times.len(), 59 * 8);
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    let (nlat, nlon) = (
        classic.forcing.axes.lat.len(),
        classic.forcing.axes.lon.len(),
    );
    let w4 = nc4.forcing.read_window(2..nlat, 3..nlon).unwrap();
    let wc = classic.forcing.read_window(0..nlat, 0..nlon).unwrap();
    for &cell in &classic.land {
        let (i, j) = classic.position(cell);
        let a = classic.run_cell(cell).unwrap();
        let b = nc4.run_cell(cell).unwrap();
        assert!(a.iter().filter(|v| v.is_finite()).count() > 10);
        assert_eq!(bits(&a), bits(&b), "cell {cell}");
        let one = classic.forcing.cell_steps(i, j, 200.0).unwrap();
        let from_window = classic.forcing.window_steps(&wc, i, j, 200.0).unwrap();
        let step_bits = |s: &[isodisc_runner::forcing::ForcingStep]| {
            s.iter()
                .flat_map(|x| [x.t_air_c, x.vpd_kpa, x.sw_w_m2, x.pressure_kpa, x.precip_mm])
                .map(f64::to_bits)
                .collect::<Vec<_>>()
        };
        assert_eq!(step_bits(&one), step_bits(&from_window), "cell {cell}");
        if w4.holds(i, j) {
            let from_nc4 = nc4.forcing.window_steps(&w4, i, j, 200.0).unwrap();
            assert_eq!(step_bits(&one), step_bits(&from_nc4), "cell {cell}");
        }
    }
}

/// `isodisc cluster-script` takes a grid file: the array tasks run `isodisc grid` on it with
/// `--shard env` and the merge job joins them (the script is valid bash: `bash -n`, common
/// practice); more shards than blocks, or an ensemble spec, are refused.
#[test]
fn cluster_script_runs_a_grid_by_blocks() {
    let tmp = tempfile::tempdir().unwrap();
    let script = tmp.path().join("submit_grid.sh");
    let g = grid_file();
    let args = |shards: &str, extra: &[&str]| {
        let mut a = vec![
            "cluster-script".to_string(),
            g.to_str().unwrap().to_string(),
            "--shards".into(),
            shards.into(),
            "--results".into(),
            tmp.path().join("res").to_str().unwrap().to_string(),
            "--out".into(),
            script.to_str().unwrap().to_string(),
        ];
        a.extend(extra.iter().map(|s| s.to_string()));
        a
    };
    let call = |a: Vec<String>| run(&a.iter().map(String::as_str).collect::<Vec<_>>());
    call(args("2", &[])).unwrap();
    let text = std::fs::read_to_string(&script).unwrap();
    let abs = std::path::absolute(&g).unwrap();
    for needle in [
        format!("GRID={}", abs.display()),
        "\"$ISODISC\" grid \"$GRID\" --out \"$RESULTS/shards/shard_\\${SLURM_ARRAY_TASK_ID}\" \
         --shard env"
            .to_string(),
        "#SBATCH --job-name=isodisc-grid".into(),
        "SHARDS=2".into(),
        "--dependency=afterok:$array_job".into(),
        "\"$ISODISC\" merge \"$RESULTS\"/shards/shard_*".into(),
    ] {
        assert!(text.contains(&needle), "script lacks {needle}:\n{text}");
    }
    assert!(!text.contains("MANIFEST"), "{text}");
    let ok = std::process::Command::new("bash")
        .arg("-n")
        .arg(&script)
        .status()
        .unwrap();
    assert!(ok.success(), "bash -n refuses the script");
    // The demo grid has 63 cells with vegetation: 2 blocks of 32.
    let e = call(args("3", &[])).unwrap_err();
    assert!(
        e.contains("--shards 3: the grid has 2 blocks; use at most 2"),
        "{e}"
    );
    let e = call(args("2", &["--spec", "x.toml", "--members", "4"])).unwrap_err();
    assert!(
        e.contains("is a grid file: --spec, --posterior and --members"),
        "{e}"
    );
}
