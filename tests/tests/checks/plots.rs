//! `isodisc plot` figures, read back from their SVG: time axes ticked at month starts (year
//! starts for long runs) and labelled "Jan", "Feb", …; typographic axis titles with units and no
//! raw column names; daily Δ fading with the day's GPP; legends above the plotted area; Keeling
//! methods told apart by dash and marker, not colour alone; no NaN or infinite coordinate; text
//! large enough to read at half size. (PNG needs a rasteriser and a bundled font that the project
//! does not carry, see the README; the SVG's elements are what a rasteriser would draw.)

use std::fs;
use std::path::Path;

use isodisc_runner::commands::plot::weighted_running_mean;
use isodisc_runner::simulate::PERIOD_COLUMNS;

use crate::common::run;

fn p(path: &Path) -> &str {
    path.to_str().unwrap()
}

/// A `<text>` element: position, font size (pixels) and content.
#[derive(Debug, Clone)]
struct SvgText {
    x: f64,
    y: f64,
    size: f64,
    text: String,
}

/// The value of attribute `name` in a tag's text.
fn attr(tag: &str, name: &str) -> Option<String> {
    let key = format!(" {name}=\"");
    let start = tag.find(&key)? + key.len();
    let end = start + tag[start..].find('"')?;
    Some(tag[start..end].to_string())
}

fn num_attr(tag: &str, name: &str) -> f64 {
    attr(tag, name)
        .and_then(|v| v.parse().ok())
        .unwrap_or_else(|| panic!("no number {name} in {tag}"))
}

/// Every element `<name …>` of the SVG, as its opening tag's text.
fn tags<'a>(svg: &'a str, name: &str) -> Vec<&'a str> {
    let open = format!("<{name} ");
    svg.match_indices(&open)
        .map(|(i, _)| &svg[i..i + svg[i..].find('>').unwrap()])
        .collect()
}

fn texts(svg: &str) -> Vec<SvgText> {
    svg.match_indices("<text ")
        .map(|(i, _)| {
            let close = i + svg[i..].find('>').unwrap();
            let end = close + svg[close..].find("</text>").unwrap();
            let tag = &svg[i..close];
            SvgText {
                x: num_attr(tag, "x"),
                y: num_attr(tag, "y"),
                size: num_attr(tag, "font-size"),
                text: svg[close + 1..end]
                    .trim()
                    .replace("&apos;", "'")
                    .replace("&amp;", "&")
                    .replace("&lt;", "<")
                    .replace("&gt;", ">"),
            }
        })
        .collect()
}

/// Top of the plotted area: the highest point of the grid lines (drawn across the whole area).
fn plot_top(svg: &str) -> f64 {
    tags(svg, "line")
        .into_iter()
        .filter(|t| attr(t, "stroke").as_deref() == Some("#E1E1E1"))
        .flat_map(|t| [num_attr(t, "y1"), num_attr(t, "y2")])
        .fold(f64::INFINITY, f64::min)
}

/// Left and right ends of the plotted area: the horizontal grid lines span it.
fn plot_x_span(svg: &str) -> (f64, f64) {
    let line = tags(svg, "line")
        .into_iter()
        .find(|t| attr(t, "stroke").as_deref() == Some("#E1E1E1") && attr(t, "y1") == attr(t, "y2"))
        .expect("a horizontal grid line");
    let (a, b) = (num_attr(line, "x1"), num_attr(line, "x2"));
    (a.min(b), a.max(b))
}

/// No coordinate or size in the file is NaN or infinite (plotters would write "NaN" or "inf").
fn assert_finite_coordinates(name: &str, svg: &str) {
    for bad in ["NaN", "inf"] {
        for tag in svg
            .split('<')
            .filter(|t| !t.starts_with("text") && !t.starts_with('/'))
        {
            let tag = tag.split('>').next().unwrap();
            assert!(!tag.contains(bad), "{name}: `{bad}` in <{tag}>");
        }
    }
}

/// The x positions of the tick labels `labels` in that order (each must appear once, below the
/// plot).
fn tick_xs(name: &str, t: &[SvgText], labels: &[&str]) -> Vec<f64> {
    labels
        .iter()
        .map(|l| {
            let hits: Vec<&SvgText> = t.iter().filter(|s| s.text == *l).collect();
            assert!(!hits.is_empty(), "{name}: no tick label {l}");
            hits.iter().map(|s| s.x).fold(f64::NAN, f64::max)
        })
        .collect()
}

/// Largest distance (pixels) of `xs` from the least-squares line through (days, xs).
fn linear_residual(days: &[f64], xs: &[f64]) -> f64 {
    let n = days.len() as f64;
    let (md, mx) = (days.iter().sum::<f64>() / n, xs.iter().sum::<f64>() / n);
    let sdd: f64 = days.iter().map(|d| (d - md).powi(2)).sum();
    let sdx: f64 = days.iter().zip(xs).map(|(d, x)| (d - md) * (x - mx)).sum();
    let b = sdx / sdd;
    days.iter()
        .zip(xs)
        .map(|(d, x)| (x - (mx + b * (d - md))).abs())
        .fold(0.0, f64::max)
}

const MONTHS: [&str; 12] = [
    "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec",
];
/// Day of the year of each month's first day, 2025 (not a leap year).
const MONTH_STARTS: [f64; 12] = [
    0.0, 31.0, 59.0, 90.0, 120.0, 151.0, 181.0, 212.0, 243.0, 273.0, 304.0, 334.0,
];

/// The demo year, its Keeling fits and its ensemble, plotted: every figure's elements checked.
#[test]
fn demo_figures_are_fit_for_a_talk() {
    let dir = tempfile::tempdir().unwrap();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../forcing-demo");
    let run_dir = dir.path().join("run");
    let site = demo.join("site.toml");
    let samples = demo.join("observations/canopy_air.csv");
    let observed = demo.join("observations/d13c_respiration_observed.csv");
    let fits = dir.path().join("keeling.csv");
    let figs = dir.path().join("figs");
    run(&["run", p(&site), "--out", p(&run_dir), "--quiet"]).unwrap();
    let nights = ["keeling", p(&samples), "--by", "night", "--site", p(&site)];
    run(&[&nights[..], &["--out", p(&fits)]].concat()).unwrap();
    run(&[
        "plot",
        p(&run_dir),
        "--out",
        p(&figs),
        "--keeling",
        p(&fits),
        "--samples",
        p(&samples),
        "--groups",
        "2025-01-10",
        "--observed",
        p(&observed),
    ])
    .unwrap();
    let read = |name: &str| fs::read_to_string(figs.join(name)).unwrap();

    // Axis titles and panel titles in typographic form with units (issue-style list: the
    // common practice of journals, symbols with their units in parentheses).
    let expected: [(&str, &[&str]); 4] = [
        (
            "discrimination_daily.svg",
            &[
                "Δ (‰)",
                "2025 (local standard time)",
                "ecosystem",
                "C₃",
                "C₄",
            ],
        ),
        (
            "d13c_respiration.svg",
            &[
                "δ¹³C of respiration (‰ VPDB)",
                "predicted",
                "observed (daily mean)",
            ],
        ),
        (
            "overview.svg",
            &[
                "Δ (‰)",
                "GPP (g C m⁻² d⁻¹)",
                "C₄ share of GPP (–)",
                "δ¹³C (‰ VPDB)",
                "Soil-water factor β (–)",
                "Disequilibrium δR − δA (‰)",
                "respiration (δR)",
                "assimilate (δA), daily",
            ],
        ),
        (
            "keeling_2025-01-10.svg",
            &["1/CO₂ (mol mmol⁻¹)", "δ¹³C of CO₂ (‰ VPDB)", "samples"],
        ),
    ];
    for (name, labels) in expected {
        let svg = read(name);
        assert_finite_coordinates(name, &svg);
        let t = texts(&svg);
        for l in labels {
            assert!(t.iter().any(|s| s.text == *l), "{name}: no text `{l}`");
        }
        // No raw column name (`c4_share`, `d13c_respiration`, …) is shown.
        for (column, _, _) in PERIOD_COLUMNS {
            assert!(
                !t.iter().any(|s| s.text == *column),
                "{name}: raw column name `{column}` shown"
            );
        }
        // Readable at half size: no text below 22 px (11 px on half a slide; common practice
        // for projected text).
        for s in &t {
            assert!(s.size >= 22.0, "{name}: `{}` at {} px", s.text, s.size);
        }
    }

    // Month-start ticks: Jan … Dec, each at the first of its month. The labels' x positions are
    // a linear function of the months' first days (Feb is 3 days shorter than Jan, …) to within
    // the pixel rounding.
    for name in [
        "discrimination_daily.svg",
        "d13c_respiration.svg",
        "overview.svg",
    ] {
        let svg = read(name);
        let t = texts(&svg);
        let xs = tick_xs(name, &t, &MONTHS);
        // (The overview's six panels repeat the labels; the right column's are taken.)
        let residual = linear_residual(&MONTH_STARTS, &xs);
        assert!(
            residual <= 1.5,
            "{name}: ticks off month starts by {residual} px: {xs:?}"
        );
        assert!(xs.windows(2).all(|w| w[1] > w[0]), "{name}: {xs:?}");
    }

    // And anchored: the demo runs 1 Jan to 31 Dec, so the axis spans 365 days from the plot's
    // left edge (where the horizontal grid lines start) to its right edge.
    let svg = read("discrimination_daily.svg");
    let (left, right) = plot_x_span(&svg);
    let xs = tick_xs("discrimination_daily.svg", &texts(&svg), &MONTHS);
    for (m, x) in xs.iter().enumerate() {
        let expected = left + (right - left) * MONTH_STARTS[m] / 365.0;
        assert!(
            (x - expected).abs() <= 2.0,
            "{}: x {x}, first of the month at {expected}",
            MONTHS[m]
        );
    }

    // Legends sit above the plotted area: they hide no data.
    let top = plot_top(&svg);
    for s in texts(&svg)
        .iter()
        .filter(|s| ["ecosystem", "C₃", "C₄"].contains(&s.text.as_str()))
    {
        assert!(
            s.y + s.size <= top,
            "legend `{}` at y {} below the plot top {top}",
            s.text,
            s.y
        );
    }

    // Daily Δ fades with GPP: the demo's dry season fixes little, so its days are drawn fainter
    // than the wet season's (0.06 is the faintest, 1 a large day).
    let opacities: Vec<f64> = tags(&svg, "circle")
        .iter()
        .filter(|t| attr(t, "r").as_deref() == Some("5"))
        .map(|t| num_attr(t, "opacity"))
        .collect();
    assert!(opacities.len() >= 300, "{} daily points", opacities.len());
    assert!(opacities.iter().any(|&o| o < 0.3) && opacities.contains(&1.0));
}

/// A synthetic year whose first ten days fix almost nothing: their points are the faintest, and
/// the 15-day running mean is weighted by GPP (hand-computed below).
#[test]
fn daily_discrimination_is_shaded_and_weighted_by_gpp() {
    let dir = tempfile::tempdir().unwrap();
    let run_dir = dir.path().join("run");
    fs::create_dir(&run_dir).unwrap();
    let mut daily = String::from("period,gpp,discrimination\n");
    for d in 0..60 {
        let (gpp, delta) = if d < 10 { (0.01, 6.0) } else { (5.0, 18.0) };
        daily.push_str(&format!("{},{gpp},{delta}\n", date_2025(d)));
    }
    fs::write(run_dir.join("daily.csv"), daily).unwrap();
    let figs = dir.path().join("figs");
    run(&["plot", p(&run_dir), "--out", p(&figs)]).unwrap();
    let svg = fs::read_to_string(figs.join("discrimination_daily.svg")).unwrap();
    let mut points: Vec<(f64, f64)> = tags(&svg, "circle")
        .iter()
        .filter(|t| attr(t, "r").as_deref() == Some("5"))
        .map(|t| (num_attr(t, "cx"), num_attr(t, "opacity")))
        .collect();
    points.sort_by(|a, b| a.0.total_cmp(&b.0));
    assert_eq!(points.len(), 60);
    // 0.01 / 5 → clamped to the faintest, 0.06; the others are at the reference GPP: 1.
    assert!(
        points[..10].iter().all(|p| (p.1 - 0.06).abs() < 1e-9),
        "{points:?}"
    );
    assert!(points[10..].iter().all(|p| p.1 == 1.0), "{points:?}");
    // Running mean by hand: day 5's window (days 0–12) has 10 days of 0.01 g at 6 ‰ and 3 days of
    // 5 g at 18 ‰: (0.1·6 + 15·18) / 15.1 = 17.92 ‰, not the unweighted 8.8 ‰.
    let v: Vec<f64> = (0..60).map(|d| if d < 10 { 6.0 } else { 18.0 }).collect();
    let w: Vec<f64> = (0..60).map(|d| if d < 10 { 0.01 } else { 5.0 }).collect();
    let mean = weighted_running_mean(&v, &w, 15);
    assert!(
        (mean[5] - (0.1 * 6.0 + 15.0 * 18.0) / 15.1).abs() < 1e-12,
        "{}",
        mean[5]
    );
    assert!(mean[0].is_finite() && (mean[59] - 18.0).abs() < 1e-12);
    // A window without weight is a gap, not a zero.
    assert!(weighted_running_mean(&[1.0, 2.0], &[0.0, 0.0], 3)[0].is_nan());
}

/// Runs over many years are ticked at year starts, labelled with the year.
#[test]
fn long_runs_are_ticked_at_year_starts() {
    let dir = tempfile::tempdir().unwrap();
    let run_dir = dir.path().join("run");
    fs::create_dir(&run_dir).unwrap();
    let mut daily = String::from("period,discrimination\n");
    for y in 2020..2026 {
        for m in 1..=12 {
            daily.push_str(&format!("{y}-{m:02}-15,{}\n", 15 + m % 3));
        }
    }
    fs::write(run_dir.join("daily.csv"), daily).unwrap();
    let figs = dir.path().join("figs");
    run(&["plot", p(&run_dir), "--out", p(&figs)]).unwrap();
    let svg = fs::read_to_string(figs.join("discrimination_daily.svg")).unwrap();
    let t = texts(&svg);
    let years = ["2021", "2022", "2023", "2024", "2025"];
    let xs = tick_xs("long run", &t, &years);
    // Days from 2021-01-01 to each 1 January (2024 is a leap year).
    let days = [0.0, 365.0, 730.0, 1095.0, 1461.0];
    assert!(linear_residual(&days, &xs) <= 1.5, "{xs:?}");
    assert!(
        !t.iter().any(|s| s.text == "Feb"),
        "month labels on a six-year axis"
    );
    assert!(
        t.iter()
            .any(|s| s.text == "2020–2025 (local standard time)")
    );
}

/// The Keeling methods differ in greyscale: OLS solid, GMR long dashes, York short dashes, each
/// with its own marker; Miller–Tans a diamond at 1/c = 0.
#[test]
fn keeling_methods_differ_by_dash_and_marker() {
    let dir = tempfile::tempdir().unwrap();
    let samples = dir.path().join("samples.csv");
    // An exact mixture of a background (400 µmol mol⁻¹ at −8.5 ‰) with a source at −26 ‰
    // (Keeling 1958), with SDs (York) and the background (Miller–Tans), plus small noise so
    // every method has residuals.
    let mut text = String::from("time,group,co2,d13c,co2_sd,d13c_sd,co2_bg,d13c_bg\n");
    for (i, added) in [10.0, 40.0, 80.0, 120.0, 160.0, 200.0].iter().enumerate() {
        let c = 400.0 + added;
        let d = (400.0 * -8.5 + added * -26.0) / c + 0.02 * (i as f64 - 2.5);
        text.push_str(&format!("2025-01-01T0{i}:00,A,{c},{d},0.5,0.05,400,-8.5\n"));
    }
    fs::write(&samples, text).unwrap();
    let fits = dir.path().join("fits.csv");
    run(&["keeling", p(&samples), "--out", p(&fits)]).unwrap();
    let run_dir = dir.path().join("run");
    fs::create_dir(&run_dir).unwrap();
    fs::write(
        run_dir.join("daily.csv"),
        "period,discrimination\n2025-01-01,12\n2025-01-02,13\n",
    )
    .unwrap();
    let figs = dir.path().join("figs");
    run(&[
        "plot",
        p(&run_dir),
        "--out",
        p(&figs),
        "--keeling",
        p(&fits),
        "--samples",
        p(&samples),
        "--groups",
        "A",
    ])
    .unwrap();
    let svg = fs::read_to_string(figs.join("keeling_A.svg")).unwrap();
    assert_finite_coordinates("keeling_A.svg", &svg);
    let t = texts(&svg);
    for method in ["OLS", "GMR", "York", "Miller–Tans"] {
        assert!(
            t.iter()
                .any(|s| s.text.starts_with(&format!("{method}: source −2"))),
            "no legend entry for {method}: {:?}",
            t.iter().map(|s| &s.text).collect::<Vec<_>>()
        );
    }
    // Markers: OLS circles, GMR triangles (3-point polygons), York squares, Miller–Tans diamonds
    // (4-point polygons), samples crosses (two lines each).
    let polygons = tags(&svg, "polygon");
    let corners = |t: &&str| attr(t, "points").unwrap().split_whitespace().count();
    assert!(tags(&svg, "circle").len() >= 2, "OLS markers");
    assert!(
        polygons.iter().filter(|t| corners(t) == 3).count() >= 2,
        "GMR markers"
    );
    assert!(
        polygons.iter().filter(|t| corners(t) == 4).count() >= 2,
        "Miller–Tans markers"
    );
    let squares = tags(&svg, "rect")
        .into_iter()
        .filter(|t| attr(t, "width").as_deref() == Some("16"))
        .count();
    assert!(squares >= 2, "York markers");
    // Dashes: the length of each colour's line pieces. OLS is drawn whole, GMR in long dashes,
    // York in short ones.
    let pieces = |colour: &str| -> Vec<f64> {
        tags(&svg, "polyline")
            .into_iter()
            .filter(|t| attr(t, "stroke").as_deref() == Some(colour))
            .map(|t| {
                let pts: Vec<f64> = attr(t, "points")
                    .unwrap()
                    .split(|c: char| c == ',' || c.is_whitespace())
                    .filter(|s| !s.is_empty())
                    .map(|s| s.parse().unwrap())
                    .collect();
                pts.chunks(2)
                    .collect::<Vec<_>>()
                    .windows(2)
                    .map(|w| ((w[1][0] - w[0][0]).powi(2) + (w[1][1] - w[0][1]).powi(2)).sqrt())
                    .sum()
            })
            .collect()
    };
    let longest = |v: &[f64]| v.iter().copied().fold(0.0, f64::max);
    let (ols, gmr, york) = (pieces("#0072B2"), pieces("#E69F00"), pieces("#009E73"));
    assert!(longest(&ols) > 500.0, "OLS solid: {ols:?}");
    assert!(
        longest(&gmr) < 30.0 && longest(&gmr) > 10.0,
        "GMR dashes: {gmr:?}"
    );
    assert!(longest(&york) <= 8.0, "York dots: {york:?}");
}

/// Ensemble envelopes: month labels and typographic titles, never the variable's column name.
#[test]
fn ensemble_figures_name_their_variables_typographically() {
    let dir = tempfile::tempdir().unwrap();
    let ens = dir.path().join("ens");
    fs::create_dir(&ens).unwrap();
    let mut q = String::from("period,variable,mean,sd,p05,p25,p50,p75,p95\n");
    for v in ["gpp", "c4_share"] {
        for m in 1..=12 {
            q.push_str(&format!("2025-{m:02},{v},15,1,13,14,15,16,17\n"));
        }
    }
    fs::write(ens.join("quantiles_monthly.csv"), q).unwrap();
    let figs = dir.path().join("figs");
    run(&["plot", p(&ens), "--out", p(&figs)]).unwrap();
    for (file, title) in [
        ("ensemble_gpp.svg", "GPP (g C m⁻² month⁻¹)"),
        ("ensemble_c4_share.svg", "C₄ share of GPP (–)"),
    ] {
        let svg = fs::read_to_string(figs.join(file)).unwrap();
        assert_finite_coordinates(file, &svg);
        let t = texts(&svg);
        assert!(t.iter().any(|s| s.text == title), "{file}: no `{title}`");
        let xs = tick_xs(file, &t, &MONTHS);
        assert!(xs.windows(2).all(|w| w[1] > w[0]), "{file}: {xs:?}");
        for raw in ["gpp", "c4_share", "2025-01"] {
            assert!(!t.iter().any(|s| s.text == raw), "{file}: raw `{raw}`");
        }
        for band in ["5–95 %", "25–75 %", "median", "mean"] {
            assert!(
                t.iter().any(|s| s.text == band),
                "{file}: no legend `{band}`"
            );
        }
    }
}

/// The date `day` days after 2025-01-01 (2025 is not a leap year).
fn date_2025(day: usize) -> String {
    let lengths = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
    let mut d = day;
    for (m, len) in lengths.iter().enumerate() {
        if d < *len {
            return format!("2025-{:02}-{:02}", m + 1, d + 1);
        }
        d -= len;
    }
    panic!("day {day} is beyond 2025");
}
