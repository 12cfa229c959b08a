//! Gridded monthly priors (docs/priors.md): the CF-1.8 NetCDF written by
//! `isodisc_runner::priors_grid`, read back with the netcdf3 crate; cell areas against the sphere;
//! fluxes and isofluxes from hand-made monthly aggregates; fills; atomic writes.

use std::fs;
use std::path::Path;

use isodisc_runner::priors_grid::{
    EARTH_RADIUS_M, GridAttributes, GridField, GridPriors, MonthAggregate, STANDARD_FIELDS,
    cell_areas_m2, month_seconds, read_priors_grid, region_totals, standard_fields, standard_index,
    write_priors_grid,
};
use netcdf3::{FileReader, NC_FILL_F64};

/// The latitude and longitude bounds of a regular global grid of `step` degrees.
fn global_bounds(step: f64) -> (Vec<[f64; 2]>, Vec<[f64; 2]>) {
    let ny = (180.0 / step).round() as usize;
    let nx = (360.0 / step).round() as usize;
    let lat_b: Vec<[f64; 2]> = (0..ny)
        .map(|i| [-90.0 + i as f64 * step, -90.0 + (i + 1) as f64 * step])
        .collect();
    let lon_b: Vec<[f64; 2]> = (0..nx)
        .map(|i| [-180.0 + i as f64 * step, -180.0 + (i + 1) as f64 * step])
        .collect();
    (lat_b, lon_b)
}

/// A small 2 × 3 grid over two months, one field with an sd and one NaN.
fn small_grid() -> GridPriors {
    let n = 2 * 2 * 3;
    let mut values: Vec<f64> = (0..n).map(|i| 1e-8 * i as f64).collect();
    values[4] = f64::NAN;
    GridPriors {
        lat: vec![10.25, 10.75],
        lon: vec![20.25, 20.75, 21.25],
        lat_bnds: vec![[10.0, 10.5], [10.5, 11.0]],
        lon_bnds: vec![[20.0, 20.5], [20.5, 21.0], [21.0, 21.5]],
        month_starts: vec![(2024, 12), (2025, 1)],
        land_mask: vec![1, 1, 0, 1, 1, 1],
        fields: vec![GridField {
            name: "gpp".into(),
            units: "kg m-2 s-1".into(),
            standard_name: Some("gross_primary_productivity_of_biomass_expressed_as_carbon".into()),
            long_name: "gross primary production".into(),
            values: values.clone(),
            sd: Some(values.iter().map(|v| v * 0.1).collect()),
        }],
        attributes: GridAttributes::new("test grid", "isodisc grid test"),
    }
}

fn attr(fr: &FileReader, var: &str, name: &str) -> Option<String> {
    fr.data_set().get_var_attr_as_string(var, name)
}

#[test]
fn file_has_the_cf_dimensions_coordinates_bounds_and_attributes() {
    // CF-1.8 §4 (coordinate types: axis, units, standard_name), §7.1 (bounds: a variable named by
    // `bounds` with a trailing vertex dimension of 2), §7.2 (cell_measures), §7.3 (cell_methods),
    // §4.4 (time units "days since ..." and calendar), §2.6.1 (Conventions). From memory.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("priors_grid.nc");
    let g = small_grid();
    write_priors_grid(&path, &g).unwrap();
    let mut fr = FileReader::open(&path).unwrap();
    let ds = fr.data_set();
    for (d, n) in [("time", 2), ("lat", 2), ("lon", 3), ("nv", 2)] {
        assert_eq!(ds.dim_size(d), Some(n), "dimension {d}");
    }
    assert_eq!(
        ds.get_global_attr_as_string("Conventions").as_deref(),
        Some("CF-1.8")
    );
    assert_eq!(
        ds.get_global_attr_as_string("title").as_deref(),
        Some("test grid")
    );
    assert_eq!(
        ds.get_global_attr_as_string("isodisc_version").as_deref(),
        Some(env!("CARGO_PKG_VERSION"))
    );
    for (var, dims) in [
        ("time", vec!["time"]),
        ("time_bnds", vec!["time", "nv"]),
        ("lat", vec!["lat"]),
        ("lat_bnds", vec!["lat", "nv"]),
        ("lon", vec!["lon"]),
        ("lon_bnds", vec!["lon", "nv"]),
        ("cell_area", vec!["lat", "lon"]),
        ("land_mask", vec!["lat", "lon"]),
        ("gpp", vec!["time", "lat", "lon"]),
        ("gpp_sd", vec!["time", "lat", "lon"]),
    ] {
        assert_eq!(ds.get_var(var).unwrap().dim_names(), dims, "{var}");
    }
    for (var, a, want) in [
        ("time", "units", "days since 2024-01-01 00:00:00"),
        ("time", "calendar", "standard"),
        ("time", "axis", "T"),
        ("time", "bounds", "time_bnds"),
        ("lat", "units", "degrees_north"),
        ("lat", "standard_name", "latitude"),
        ("lat", "bounds", "lat_bnds"),
        ("lon", "units", "degrees_east"),
        ("lon", "bounds", "lon_bnds"),
        ("cell_area", "units", "m2"),
        ("cell_area", "standard_name", "cell_area"),
        ("land_mask", "standard_name", "land_binary_mask"),
        ("gpp", "units", "kg m-2 s-1"),
        (
            "gpp",
            "standard_name",
            "gross_primary_productivity_of_biomass_expressed_as_carbon",
        ),
        ("gpp", "cell_methods", "time: mean"),
        ("gpp", "cell_measures", "area: cell_area"),
        ("gpp", "ancillary_variables", "gpp_sd"),
        ("gpp_sd", "cell_methods", "time: mean"),
    ] {
        assert_eq!(attr(&fr, var, a).as_deref(), Some(want), "{var}:{a}");
    }
    assert_eq!(
        fr.data_set().get_var_attr_f64("gpp", "_FillValue"),
        Some(&[NC_FILL_F64][..])
    );
    // December 2024 runs from day 335 to 366 after 2024-01-01 (a leap year: 31+29+31+30+31+30+31
    // +31+30+31+30 = 335), January 2025 from 366 to 397; values at mid-month (by hand).
    let time = fr.read_var("time").unwrap().get_f64_into().unwrap();
    let bnds = fr.read_var("time_bnds").unwrap().get_f64_into().unwrap();
    assert_eq!(bnds, vec![335.0, 366.0, 366.0, 397.0]);
    assert_eq!(time, vec![350.5, 381.5]);
    let lat_b = fr.read_var("lat_bnds").unwrap().get_f64_into().unwrap();
    assert_eq!(lat_b, vec![10.0, 10.5, 10.5, 11.0]);
    let mask = fr.read_var("land_mask").unwrap().get_i8_into().unwrap();
    assert_eq!(mask, vec![1, 1, 0, 1, 1, 1]);
    // The NaN became the fill value; the rest is written as given.
    let gpp = fr.read_var("gpp").unwrap().get_f64_into().unwrap();
    assert_eq!(gpp[4], NC_FILL_F64);
    assert_eq!(gpp[5], 5e-8);
    // And the reader gives back what was written (NaN for the fill).
    let back = read_priors_grid(&path).unwrap();
    assert_eq!(back.month_starts, g.month_starts);
    assert_eq!(back.lon_bnds, g.lon_bnds);
    assert_eq!(back.land_mask, g.land_mask);
    assert!(back.fields[0].values[4].is_nan());
    assert_eq!(back.fields[0].sd.as_ref().unwrap()[5], 5e-9);
    assert_eq!(back.fields[0].standard_name, g.fields[0].standard_name);
}

#[test]
fn cell_areas_of_a_global_grid_sum_to_the_sphere() {
    // Geometry: the sphere's area is 4 pi R^2; the rectangles of a global grid tile it.
    let (lat_b, lon_b) = global_bounds(1.0);
    let areas = cell_areas_m2(&lat_b, &lon_b);
    assert_eq!(areas.len(), 180 * 360);
    let sphere = 4.0 * std::f64::consts::PI * EARTH_RADIUS_M * EARTH_RADIUS_M;
    let total: f64 = areas.iter().sum();
    assert!(
        ((total - sphere) / sphere).abs() < 1e-9,
        "{total} vs {sphere}"
    );
    // A 1° cell at the equator: R² · (π/180) · sin(1°) (by hand).
    let eq = EARTH_RADIUS_M.powi(2) * 1f64.to_radians() * 1f64.to_radians().sin();
    let cell = areas[90 * 360];
    assert!(((cell - eq) / eq).abs() < 1e-12, "{cell} vs {eq}");
    // The file's cell_area holds the same numbers.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("g.nc");
    let g = small_grid();
    write_priors_grid(&path, &g).unwrap();
    let mut fr = FileReader::open(&path).unwrap();
    let a = fr.read_var("cell_area").unwrap().get_f64_into().unwrap();
    assert_eq!(a, cell_areas_m2(&g.lat_bnds, &g.lon_bnds));
}

fn aggregate(gpp: f64, disc: f64, reco: f64, diseq: f64) -> MonthAggregate {
    MonthAggregate {
        gpp_g_m2: gpp,
        gpp_c4_g_m2: 0.25 * gpp,
        discrimination_permil: disc,
        discrimination_c3_permil: disc + 1.0,
        discrimination_c4_permil: 4.0,
        d13c_assimilate_permil: -8.4 - disc,
        reco_g_m2: reco,
        d13c_respiration_permil: -8.4 - disc + diseq,
        disequilibrium_permil: diseq,
        complete: true,
    }
}

#[test]
fn fluxes_and_isofluxes_from_monthly_sums_by_hand() {
    // 310 gC m-2 in July (31 days = 2,678,400 s): 310 / 1000 / 2,678,400 kg C m-2 s-1; February
    // 2024 has 29 days (2,505,600 s). Isofluxes are flux x permil value (by hand).
    assert_eq!(month_seconds((2025, 7)), 2_678_400.0);
    assert_eq!(month_seconds((2024, 2)), 2_505_600.0);
    assert_eq!(month_seconds((2023, 2)), 2_419_200.0);
    let months = [(2025, 7), (2024, 2)];
    let a = aggregate(310.0, 18.5, 200.0, 1.5);
    let b = aggregate(290.0, 19.5, 180.0, 0.5);
    // One cell, two members with both months; one cell that was not run.
    let cells = vec![
        vec![vec![Some(a), Some(a)], vec![Some(b), Some(b)]],
        Vec::new(),
    ];
    let f = standard_fields(&months, &cells, true);
    assert_eq!(f.len(), STANDARD_FIELDS.len());
    let get = |n: &str, t: usize, c: usize| {
        let k = standard_index(n);
        (f[k].values[t * 2 + c], f[k].sd.as_ref().unwrap()[t * 2 + c])
    };
    let tol = 1e-12;
    let close = |x: f64, y: f64| (x - y).abs() <= tol * y.abs().max(1e-30);
    let jul = 2_678_400.0;
    let (gpp, gpp_sd) = get("gpp", 0, 0);
    assert!(close(gpp, 300.0 / 1000.0 / jul), "{gpp}");
    // Sample sd of {310, 290} = 14.1421...; in flux units ÷ 1000 ÷ s.
    assert!(close(gpp_sd, 200f64.sqrt() / 1000.0 / jul), "{gpp_sd}");
    let (reco, _) = get("reco", 0, 0);
    assert!(close(reco, 190.0 / 1000.0 / jul));
    let (nee, _) = get("nee", 0, 0);
    assert!(close(nee, -110.0 / 1000.0 / jul));
    let feb = 2_505_600.0;
    let (gpp_feb, _) = get("gpp", 1, 0);
    assert!(close(gpp_feb, 300.0 / 1000.0 / feb));
    // Isofluxes: the mean of each member's product, not the product of the means.
    let (iso, _) = get("isoflux_discrimination", 0, 0);
    let want = 0.5 * (310.0 * 18.5 + 290.0 * 19.5) / 1000.0 / jul;
    assert!(close(iso, want), "{iso} vs {want}");
    let (iso_d, _) = get("isoflux_disequilibrium", 0, 0);
    assert!(close(
        iso_d,
        0.5 * (200.0 * 1.5 + 180.0 * 0.5) / 1000.0 / jul
    ));
    let (disc, disc_sd) = get("discrimination", 0, 0);
    assert!(close(disc, 19.0) && close(disc_sd, 0.5f64.sqrt()));
    let (c4, _) = get("c4_share", 0, 0);
    assert!(close(c4, 0.25));
    // The cell that was not run has no values (NaN → fill), never zeros.
    for spec in STANDARD_FIELDS {
        let k = standard_index(spec.0);
        assert!(
            f[k].values[1].is_nan() && f[k].values[3].is_nan(),
            "{}",
            spec.0
        );
    }
}

#[test]
fn incomplete_months_and_single_runs_have_no_made_up_values() {
    // A run that lacks steps of a month gives no mean flux for it; a single run has no sd
    // (one run says nothing about spread; common practice).
    let mut part = aggregate(100.0, 18.0, 80.0, 1.0);
    part.complete = false;
    let full = aggregate(310.0, 18.5, 200.0, 1.5);
    let f = standard_fields(
        &[(2025, 6), (2025, 7)],
        &[vec![vec![Some(part), Some(full)]]],
        false,
    );
    let gpp = &f[standard_index("gpp")];
    assert!(gpp.values[0].is_nan());
    assert!((gpp.values[1] - 310.0 / 1000.0 / 2_678_400.0).abs() < 1e-20);
    assert!(f.iter().all(|x| x.sd.is_none()));
    // GPP of 0: the photosynthetic isoflux is 0 (nothing fixed), Δ and the C4 share undefined.
    let winter = aggregate(0.0, f64::NAN, 20.0, f64::NAN);
    let f = standard_fields(&[(2025, 1)], &[vec![vec![Some(winter)]]], false);
    assert_eq!(f[standard_index("isoflux_discrimination")].values[0], 0.0);
    assert!(f[standard_index("discrimination")].values[0].is_nan());
    assert!(f[standard_index("c4_share")].values[0].is_nan());
}

#[test]
fn regional_totals_follow_from_flux_area_and_time() {
    // One land cell of 1 kg C m-2 per Julian year: the total is its area x 1e-12 Pg; Δ and C4
    // share are GPP-weighted means of the cells (by hand).
    let mut g = small_grid();
    let n = 2 * 6;
    let per_s = 1.0 / (365.25 * 86_400.0);
    let mut gpp = vec![f64::NAN; n];
    let mut disc = vec![f64::NAN; n];
    let mut c4 = vec![f64::NAN; n];
    // Month 0: cell 0 and cell 1 (twice the flux) are land; cell 2 has a value but is not land.
    for (c, (x, d, s)) in [
        (0, (1.0, 20.0, 0.0)),
        (1, (2.0, 17.0, 0.5)),
        (2, (9.0, 0.0, 1.0)),
    ] {
        gpp[c] = x * per_s;
        disc[c] = d;
        c4[c] = s;
    }
    let field = |name: &str, values: Vec<f64>| GridField {
        name: name.into(),
        units: "1".into(),
        standard_name: None,
        long_name: name.into(),
        values,
        sd: None,
    };
    g.fields = vec![
        field("gpp", gpp),
        field("discrimination", disc),
        field("c4_share", c4),
    ];
    let areas = g.cell_areas_m2();
    let totals = region_totals(&g).unwrap();
    let global = &totals[0];
    assert_eq!(global.name, "global");
    assert_eq!(global.cell_months, 2);
    // Over two months only the first has values: the rate is the first month's carbon spread
    // over both months' seconds.
    let (s0, s1) = (31.0 * 86_400.0, 31.0 * 86_400.0);
    let kg = (areas[0] + 2.0 * areas[1]) * per_s * s0;
    let want = kg / (s0 + s1) * 365.25 * 86_400.0 * 1e-12;
    assert!((global.gpp_pg_c_yr - want).abs() <= 1e-12 * want);
    let w = (areas[0] * 20.0 + 2.0 * areas[1] * 17.0) / (areas[0] + 2.0 * areas[1]);
    assert!((global.discrimination_permil - w).abs() < 1e-12);
    let s = (2.0 * areas[1] * 0.5) / (areas[0] + 2.0 * areas[1]);
    assert!((global.c4_share - s).abs() < 1e-12);
    // The cells lie at 10-11°N: all in the tropical band, none elsewhere.
    assert_eq!(totals[2].cell_months, 2);
    assert_eq!(totals[1].cell_months, 0);
    assert!(totals[1].gpp_pg_c_yr.is_nan() || totals[1].gpp_pg_c_yr == 0.0);
}

fn listing(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn bad_grids_are_refused_by_name_and_failed_writes_leave_nothing() {
    // Common practice: the error names what is wrong; a failed write leaves the earlier file
    // whole and no temporary file beside it.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("priors_grid.nc");
    let good = small_grid();
    write_priors_grid(&path, &good).unwrap();
    let before = fs::read(&path).unwrap();
    type Spoil = Box<dyn Fn(&mut GridPriors)>;
    let cases: Vec<(Spoil, &str)> = vec![
        (
            Box::new(|g| g.fields[0].values.pop().map(|_| ()).unwrap()),
            "11 values",
        ),
        (Box::new(|g| g.lat_bnds[1] = [10.9, 10.5]), "lat_bnds[1]"),
        (Box::new(|g| g.lon[2] = 30.0), "lon[2] = 30"),
        (
            Box::new(|g| g.month_starts[1] = (2024, 11)),
            "month_starts[1] = 2024-11",
        ),
        (
            Box::new(|g| g.month_starts[0] = (2024, 13)),
            "month_starts[0]",
        ),
        (Box::new(|g| g.land_mask[3] = 2), "land_mask[3] = 2"),
        (
            Box::new(|g| g.fields[0].name = "lat".into()),
            "field name `lat`",
        ),
        (
            Box::new(|g| {
                let mut f = g.fields[0].clone();
                f.name = "gpp_sd".into();
                g.fields.push(f);
            }),
            "gpp_sd",
        ),
    ];
    for (spoil, want) in cases {
        let mut g = good.clone();
        spoil(&mut g);
        let e = write_priors_grid(&path, &g).unwrap_err().chain();
        assert!(
            e.contains(want) && e.contains("priors_grid.nc"),
            "{want}: {e}"
        );
        assert_eq!(fs::read(&path).unwrap(), before, "{want}");
        assert_eq!(listing(dir.path()), ["priors_grid.nc"], "{want}");
    }
    // A write that fails at the end (the target is a folder, so the rename fails): the temporary
    // file is removed and the folder untouched.
    let blocked = dir.path().join("blocked.nc");
    fs::create_dir(&blocked).unwrap();
    fs::write(blocked.join("keep"), "x").unwrap();
    assert!(write_priors_grid(&blocked, &good).is_err());
    assert_eq!(listing(dir.path()), ["blocked.nc", "priors_grid.nc"]);
    assert_eq!(listing(&blocked), ["keep"]);
}

#[test]
fn batch_priors_have_what_xarray_needs_and_fluxes_per_second() {
    // xarray (conventions.decode_cf, from memory; cross-checked by
    // tests/fixtures/check_priors_xarray.py with xarray 2026.9) turns a 2-D NC_CHAR variable into
    // strings along its first dimension, and into `str` rather than bytes when it carries
    // `_Encoding = "utf-8"`; named like its dimension `site`, it becomes the index that
    // `.sel(site=...)` uses. `time` with `units = "days since ..."` and `bounds` decodes to
    // datetimes, and so does the bounds variable.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("batch");
    let manifest = crate::common::demo_path("batch/manifest.toml");
    crate::common::run(&[
        "batch",
        manifest.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ])
    .unwrap();
    let mut fr = FileReader::open(out.join("priors.nc")).unwrap();
    let ds = fr.data_set();
    let site = ds.get_var("site").unwrap();
    assert_eq!(site.data_type(), netcdf3::DataType::U8, "NC_CHAR");
    assert_eq!(site.dim_names(), ["site", "name_strlen"]);
    assert_eq!(attr(&fr, "site", "_Encoding").as_deref(), Some("utf-8"));
    assert_eq!(
        attr(&fr, "site", "cf_role").as_deref(),
        Some("timeseries_id")
    );
    let ds = fr.data_set();
    assert_eq!(ds.get_var("time").unwrap().dim_names(), ["time"]);
    assert_eq!(ds.get_var("time_bnds").unwrap().dim_names(), ["time", "nv"]);
    assert_eq!(ds.get_var("gpp").unwrap().dim_names(), ["site", "time"]);
    assert_eq!(ds.get_var("utc_offset").unwrap().dim_names(), ["site"]);
    assert_eq!(attr(&fr, "time", "bounds").as_deref(), Some("time_bnds"));
    assert_eq!(
        attr(&fr, "time", "units").as_deref(),
        Some("days since 2025-01-01 00:00:00")
    );
    assert_eq!(attr(&fr, "gpp", "units").as_deref(), Some("kg m-2 s-1"));
    assert_eq!(
        attr(&fr, "isoflux_discrimination", "units").as_deref(),
        Some("1e-3 kg m-2 s-1")
    );
    assert_eq!(
        fr.data_set()
            .get_global_attr_as_string("featureType")
            .as_deref(),
        Some("timeSeries")
    );
    let chars = fr.read_var("site").unwrap().get_u8_into().unwrap();
    assert!(chars.starts_with(b"miombo"));
    // January 2025 of the first site: priors' GPP = monthly.csv's gC m-2 / 1000 / (31 x 86,400 s)
    // (by hand; monthly.csv is rounded to 6 decimals).
    let monthly = fs::read_to_string(out.join("sites/miombo/monthly.csv")).unwrap();
    let header: Vec<&str> = monthly.lines().next().unwrap().split(',').collect();
    let jan: Vec<&str> = monthly.lines().nth(1).unwrap().split(',').collect();
    assert_eq!(jan[0], "2025-01");
    let col = |n: &str| -> f64 {
        jan[header.iter().position(|h| *h == n).unwrap()]
            .parse()
            .unwrap()
    };
    let gpp = fr.read_var("gpp").unwrap().get_f64_into().unwrap();
    let want = col("gpp") / 1000.0 / (31.0 * 86_400.0);
    assert!(
        ((gpp[0] - want) / want).abs() < 1e-6,
        "{} vs {want}",
        gpp[0]
    );
    let iso = fr
        .read_var("isoflux_discrimination")
        .unwrap()
        .get_f64_into()
        .unwrap();
    let want = col("gpp") * col("discrimination") / 1000.0 / (31.0 * 86_400.0);
    assert!(
        ((iso[0] - want) / want).abs() < 1e-5,
        "{} vs {want}",
        iso[0]
    );
    let offsets = fr.read_var("utc_offset").unwrap().get_f64_into().unwrap();
    // Every demo site keeps the template's clock (forcing-demo/site.toml: utc_offset = 2).
    assert_eq!(offsets, [2.0; 4]);
    // A single run per site: every sd is the fill value, never 0.
    let sd = fr.read_var("gpp_sd").unwrap().get_f64_into().unwrap();
    assert!(sd.iter().all(|x| *x == NC_FILL_F64));
}

/// An invented 10° global grid over January and July 2025: land where an invented pattern is
/// positive, GPP and Δ smooth functions of latitude and season, one land cell without a value.
/// Built through `standard_fields` from hand-made monthly sums, as a grid run builds it.
fn invented_grid() -> GridPriors {
    let (lat_bnds, lon_bnds) = global_bounds(10.0);
    let centre = |b: &[[f64; 2]]| b.iter().map(|[a, z]| 0.5 * (a + z)).collect::<Vec<_>>();
    let (lat, lon) = (centre(&lat_bnds), centre(&lon_bnds));
    let months = vec![(2025, 1), (2025, 7)];
    let mut land_mask = Vec::new();
    let mut cells = Vec::new();
    for (i, &y) in lat.iter().enumerate() {
        for (j, &x) in lon.iter().enumerate() {
            let land = (x.to_radians() * 2.0).sin() + 0.6 * (y.to_radians() * 3.0).cos() > 0.3
                && y > -60.0
                && y < 80.0;
            land_mask.push(u8::from(land));
            if !land || (i, j) == (9, 20) {
                cells.push(Vec::new());
                continue;
            }
            let member = months
                .iter()
                .map(|&(_, m)| {
                    let summer = if (m == 7) == (y > 0.0) { 1.0 } else { 0.3 };
                    let gpp = 300.0 * y.to_radians().cos().powi(2) * summer;
                    let share = (0.5 - y.abs() / 60.0).clamp(0.0, 0.6);
                    let disc = 19.0 * (1.0 - share) + 4.0 * share;
                    Some(MonthAggregate {
                        gpp_g_m2: gpp,
                        gpp_c4_g_m2: share * gpp,
                        discrimination_permil: disc,
                        discrimination_c3_permil: 19.0,
                        discrimination_c4_permil: 4.0,
                        d13c_assimilate_permil: -8.5 - disc,
                        reco_g_m2: 0.9 * gpp + 20.0,
                        d13c_respiration_permil: -8.5 - disc + 0.8,
                        disequilibrium_permil: 0.8,
                        complete: true,
                    })
                })
                .collect();
            cells.push(vec![member]);
        }
    }
    GridPriors {
        lat,
        lon,
        lat_bnds,
        lon_bnds,
        fields: standard_fields(&months, &cells, false),
        month_starts: months,
        land_mask,
        attributes: GridAttributes::new(
            "invented 10-degree grid (not real data)",
            "isodisc-checks priors_grid::invented_grid",
        ),
    }
}

#[test]
fn invented_grid_matches_its_golden_copy_and_maps() {
    // Golden copy (common practice): tests/golden/priors_grid/priors_grid.nc, also the input of
    // the documented `isodisc plot --map` example and of tests/fixtures/check_priors_xarray.py.
    // Compared after reading back, apart from the isodisc version it records;
    // ISODISC_UPDATE_GOLDEN=1 rewrites it.
    let golden = Path::new(env!("CARGO_MANIFEST_DIR")).join("golden/priors_grid");
    let dir = tempfile::tempdir().unwrap();
    let g = invented_grid();
    write_priors_grid(&dir.path().join("priors_grid.nc"), &g).unwrap();
    if std::env::var_os("ISODISC_UPDATE_GOLDEN").is_some() {
        fs::create_dir_all(&golden).unwrap();
        write_priors_grid(&golden.join("priors_grid.nc"), &g).unwrap();
    }
    let mut want = read_priors_grid(&golden.join("priors_grid.nc")).unwrap();
    let mut got = read_priors_grid(&dir.path().join("priors_grid.nc")).unwrap();
    want.attributes.isodisc_version.clear();
    got.attributes.isodisc_version.clear();
    let bits = |p: &GridPriors| -> Vec<Vec<u64>> {
        p.fields
            .iter()
            .map(|f| f.values.iter().map(|v| v.to_bits()).collect())
            .collect()
    };
    assert_eq!(
        bits(&got),
        bits(&want),
        "field values differ from the golden copy"
    );
    let strip = |mut p: GridPriors| {
        for f in &mut p.fields {
            f.values.clear();
        }
        p
    };
    assert_eq!(strip(got), strip(want));

    // The map of July GPP: one rectangle per run of equal colour; the land cell without a value
    // is grey, the cells not run pale; title, unit (g C m-2 d-1) and the key are written.
    let out = dir.path().join("maps");
    crate::common::run(&[
        "plot",
        golden.to_str().unwrap(),
        "--map",
        "gpp",
        "--month",
        "2025-07",
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap();
    let svg = fs::read_to_string(out.join("map_gpp_2025-07.svg")).unwrap();
    assert!(svg.contains("gpp, 2025-07") && svg.contains("gross primary production"));
    assert!(svg.contains("g C m⁻² d⁻¹"));
    assert!(svg.contains("no value") && svg.contains("not run"));
    assert_eq!(
        svg.matches(r##"fill="#969696""##).count(),
        2,
        "one grey cell + its key"
    );
    assert!(svg.contains(r##"fill="#E4E8EC""##), "cells not run");
    assert!(
        svg.contains("60°N") && svg.contains("120°W"),
        "lat/lon tick labels"
    );
    // Refusals name the variable or month and what the file has.
    let e = crate::common::run(&[
        "plot",
        golden.to_str().unwrap(),
        "--map",
        "gdp",
        "--month",
        "2025-07",
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap_err();
    assert!(e.contains("--map gdp") && e.contains("gpp, reco"), "{e}");
    let e = crate::common::run(&[
        "plot",
        golden.to_str().unwrap(),
        "--map",
        "gpp",
        "--month",
        "2025-03",
        "--out",
        out.to_str().unwrap(),
    ])
    .unwrap_err();
    assert!(e.contains("2025-01 to 2025-07"), "{e}");
}
