//! Isotope arithmetic, temperature responses, leaf gas exchange and leaf discrimination against
//! published equations and worked values. Each check names its source.

use isodisc_model::discrimination::{C4Fractionations, c3_simple_permil, c4_b4_permil, c4_permil};
use isodisc_model::isotopes::{VpdbRatio, discrimination_permil, product_delta_permil};
use isodisc_model::leaf::c3::{electron_limited_rate, electron_transport};
use isodisc_model::leaf::c4::vmax_at;
use isodisc_model::leaf::{
    C3Form, C3Params, C4Params, ElectronLimit, LeafConditions, LeafOptions, solve_c3, solve_c4,
};
use isodisc_model::temperature::{
    arrhenius_factor, peaked_arrhenius_factor, peaked_arrhenius_optimum_c,
};
use proptest::prelude::*;

/// Tolerance for values published to two decimals.
const TOL_2DP: f64 = 0.006;
/// Tolerance for identities that hold exactly up to the solver's tolerance.
const TOL_EXACT: f64 = 1e-9;

fn assert_close(actual: f64, expected: f64, tol: f64, what: &str) {
    assert!(
        (actual - expected).abs() <= tol,
        "{what}: got {actual}, expected {expected} ± {tol}"
    );
}

#[test]
fn delta_ratio_round_trips_and_reference_values() {
    let std = VpdbRatio::default();
    // δ = −8.5‰ → R = 0.0110852 with R_VPDB = 0.0111802 (Werner & Brand 2001).
    assert_close(std.ratio_from_delta(-8.5), 0.011_085_2, 5e-8, "R at -8.5");
    for d in [-40.0, -27.0, -8.5, 0.0, 12.3] {
        assert_close(
            std.delta_from_ratio(std.ratio_from_delta(d)),
            d,
            1e-12,
            "delta round trip",
        );
        // Δ then δp recovers the product (Farquhar, Ehleringer & Hubick 1989 definitions).
        let disc = discrimination_permil(-8.5, d);
        assert_close(product_delta_permil(-8.5, disc), d, 1e-12, "Δ round trip");
    }
    // Worked values: δa = −8‰, Δ = 20‰ → δp = −27.451‰; δa = −8.5‰, δp = −27‰ → Δ = 19.013‰
    // (Farquhar, Ehleringer & Hubick 1989 definition; arithmetic by hand).
    assert_close(product_delta_permil(-8.0, 20.0), -27.451, 0.0005, "δp");
    assert_close(discrimination_permil(-8.5, -27.0), 19.013, 0.0005, "Δ");
    // About 1% of CO2 is 13CO2: 4.39 µmol mol⁻¹ of 400 at −8.5‰ (common practice).
    let (c12, c13) = std.split_co2(400.0, -8.5);
    assert_close(c13, 4.39, 0.005, "13CO2");
    assert_close(c12 + c13, 400.0, 1e-12, "split sums");
    assert!(VpdbRatio::new(0.02).is_err());
    assert!(VpdbRatio::new(f64::NAN).is_err());
}

#[test]
fn bernacchi_2001_kinetics_at_15_25_35_c() {
    // Bernacchi et al. 2001, Plant Cell Environ.: values at 25 °C and, through the Arrhenius form
    // normalised to 25 °C, at 15 and 35 °C.
    let p = C3Params::default();
    let table = [
        ("kc", p.kc25(), p.ea_kc(), [133.2, 404.9, 1145.4], 0.1),
        ("ko", p.ko25(), p.ea_ko(), [167.3, 278.4, 448.2], 0.1),
        (
            "gamma_star",
            p.gamma_star25(),
            p.ea_gamma_star(),
            [25.17, 42.75, 70.15],
            0.01,
        ),
    ];
    for (name, k25, ea, expected, tol) in table {
        for (t, want) in [15.0, 25.0, 35.0].into_iter().zip(expected) {
            assert_close(
                k25 * arrhenius_factor(ea, t),
                want,
                tol,
                &format!("{name} at {t} °C"),
            );
        }
    }
}

#[test]
fn peaked_arrhenius_medlyn_2002() {
    // Medlyn et al. 2002 form with Ha 65.33 kJ, Hd 200 kJ, ΔS 650 J/K: f(25) = 1 exactly,
    // f(35) = 1.199, f(40) = 0.779, Topt = 31.7 °C (values worked from the published equation).
    let (ha, hd, ds) = (65_330.0, 200_000.0, 650.0);
    assert_close(
        peaked_arrhenius_factor(ha, hd, ds, 25.0),
        1.0,
        1e-14,
        "f(25)",
    );
    assert_close(
        peaked_arrhenius_factor(ha, hd, ds, 35.0),
        1.199,
        0.0005,
        "f(35)",
    );
    assert_close(
        peaked_arrhenius_factor(ha, hd, ds, 40.0),
        0.779,
        0.0005,
        "f(40)",
    );
    assert_close(peaked_arrhenius_optimum_c(ha, hd, ds), 31.7, 0.05, "Topt");
}

#[test]
fn electron_transport_and_wj_forms() {
    // Non-rectangular hyperbola, I = 1000, Jmax = 150 (worked from the equation):
    // α 0.3, θ 0.7 → 123.87; α 0.3, θ 0.9 → 138.20.
    assert_close(
        electron_transport(1000.0, 150.0, 0.3, 0.7),
        123.87,
        TOL_2DP,
        "J θ=0.7",
    );
    assert_close(
        electron_transport(1000.0, 150.0, 0.3, 0.9),
        138.20,
        TOL_2DP,
        "J θ=0.9",
    );
    // Wj with J = 100, cc = 250, Γ* = 42.75: 15.44 (4/8, FvCB 1980 / von Caemmerer 2000) and
    // 13.17 (4.5/10.5).
    assert_close(
        electron_limited_rate(100.0, 250.0, 42.75, ElectronLimit::Nadph),
        15.44,
        TOL_2DP,
        "4/8",
    );
    assert_close(
        electron_limited_rate(100.0, 250.0, 42.75, ElectronLimit::Atp),
        13.17,
        TOL_2DP,
        "4.5/10.5",
    );
}

#[test]
fn collatz_1992_vmax_temperature_response() {
    // Collatz, Ribas-Carbo & Berry 1992 (constants from memory): Vmax25 = 39 → 12.57, 36.61, 44.75.
    for (t, want) in [(15.0, 12.57), (25.0, 36.61), (35.0, 44.75)] {
        assert_close(vmax_at(39.0, t), want, TOL_2DP, &format!("Vmax at {t} °C"));
    }
}

#[test]
fn c3_simple_discrimination_farquhar_1982() {
    // Farquhar, O'Leary & Berry 1982 with a = 4.4‰, b = 27‰: ci/ca 0.7 → 20.22‰, 0.6 → 17.96‰.
    assert_close(
        c3_simple_permil(0.7, 4.4, 27.0),
        20.22,
        TOL_2DP,
        "ci/ca 0.7",
    );
    assert_close(
        c3_simple_permil(0.6, 4.4, 27.0),
        17.96,
        TOL_2DP,
        "ci/ca 0.6",
    );
}

#[test]
fn c4_b4_and_leakiness_worked_points() {
    // b4 = −9483/T + 23.89 + 2.2 (Farquhar 1983 with Mook et al. 1974): −6.82, −5.72, −4.68‰ at
    // 15, 25, 35 °C; at 25 °C −5.7 ± 0.05‰.
    assert_close(c4_b4_permil(25.0), -5.7, 0.05, "b4(25)");
    for (t, want) in [(15.0, -6.82), (25.0, -5.72), (35.0, -4.68)] {
        assert_close(c4_b4_permil(t), want, TOL_2DP, &format!("b4({t})"));
    }
    // Farquhar 1983 at ci/ca = 0.4, 25 °C, no boundary layer: φ 0.2, 0.3, 0.35 → 2.61, 3.74, 4.30‰.
    for (phi, want) in [(0.2, 2.61), (0.3, 3.74), (0.35, 4.30)] {
        let fr = C4Fractionations {
            ab: 2.9,
            a: 4.4,
            b3: 30.0,
            s: 1.8,
            leakiness: phi,
        };
        assert_close(
            c4_permil(400.0, 400.0, 160.0, 25.0, &fr),
            want,
            TOL_2DP,
            &format!("φ {phi}"),
        );
    }
}

fn c3_with(overrides: &[(&str, f64)]) -> C3Params {
    C3Params::with_overrides(overrides.iter().copied()).unwrap()
}

#[test]
fn medlyn_ci_ca_without_g0_is_g1_over_g1_plus_sqrt_d() {
    // Medlyn et al. 2011: with g0 = 0 and no boundary layer, ci/ca = g1/(g1 + √D) exactly.
    for g1 in [1.6, 2.3, 4.1, 5.3] {
        for d in [0.3, 1.0, 2.5, 4.0] {
            let p = c3_with(&[("g0", 0.0), ("g1", g1)]);
            let c = LeafConditions {
                vpd_kpa: d,
                ..LeafConditions::default()
            };
            let s = solve_c3(&p, &LeafOptions::default(), &c).unwrap();
            assert_close(
                s.ci_ca,
                g1 / (g1 + d.sqrt()),
                TOL_EXACT,
                &format!("C3 g1 {g1} D {d}"),
            );
            let q = C4Params::with_overrides([("g0", 0.0), ("g1", g1)]).unwrap();
            let s4 = solve_c4(&q, &LeafOptions::default(), &c).unwrap();
            assert_close(
                s4.ci_ca,
                g1 / (g1 + d.sqrt()),
                TOL_EXACT,
                &format!("C4 g1 {g1} D {d}"),
            );
        }
    }
}

#[test]
fn comprehensive_equals_simple_in_its_limits() {
    // Farquhar et al. 1982: with gm = ∞, no boundary layer, e = f = 0 and b = 27‰ the comprehensive
    // form reduces to Δ = a + (b − a)ci/ca.
    let p = c3_with(&[("e", 0.0), ("f", 0.0), ("b", 27.0)]);
    for (t, i, d) in [(15.0, 300.0, 0.8), (25.0, 1500.0, 1.5), (32.0, 800.0, 3.0)] {
        let c = LeafConditions {
            t_leaf_c: t,
            ppfd_umol_m2_s: i,
            vpd_kpa: d,
            ..LeafConditions::default()
        };
        let comp = solve_c3(&p, &LeafOptions::default(), &c).unwrap();
        let simple = solve_c3(
            &p,
            &LeafOptions {
                c3_form: C3Form::Simple,
                ..LeafOptions::default()
            },
            &c,
        )
        .unwrap();
        assert_close(
            comp.discrimination,
            simple.discrimination,
            1e-10,
            "comprehensive vs simple",
        );
        assert_close(
            simple.discrimination,
            c3_simple_permil(simple.ci_ca, 4.4, 27.0),
            1e-12,
            "simple",
        );
    }
}

#[test]
fn supply_and_demand_agree_with_boundary_layer_and_mesophyll() {
    // Fick's law along the path (common practice): A = gb/1.37 (ca − cs) = gs/1.6 (cs − ci), and
    // cc = ci − A/gm by definition of gm.
    let p = c3_with(&[("gb", 1.5), ("gm", 0.2), ("g0", 0.01)]);
    let s = solve_c3(&p, &LeafOptions::default(), &LeafConditions::default()).unwrap();
    let ca = LeafConditions::default().ca_umol_mol;
    assert_close(s.a_net, 1.5 / 1.37 * (ca - s.c_s), 1e-6, "boundary layer");
    assert_close(s.a_net, s.g_s / 1.6 * (s.c_s - s.c_i), 1e-6, "stomata");
    assert_close(s.c_c, s.c_i - s.a_net / 0.2, 1e-9, "mesophyll");
    // A finite mesophyll conductance lowers A and Δ (Evans et al. 1986).
    let open = solve_c3(
        &c3_with(&[("g0", 0.01)]),
        &LeafOptions::default(),
        &LeafConditions::default(),
    )
    .unwrap();
    assert!(s.a_net < open.a_net && s.discrimination < open.discrimination);
}

#[test]
fn c4_discriminates_far_less_than_c3() {
    // C3 leaves ≈ 15–24‰, C4 ≈ 2–6‰ (common practice).
    for (t, i, d) in [(20.0, 1200.0, 1.0), (30.0, 1800.0, 2.5), (25.0, 600.0, 1.5)] {
        let c = LeafConditions {
            t_leaf_c: t,
            ppfd_umol_m2_s: i,
            vpd_kpa: d,
            ..LeafConditions::default()
        };
        let c3 = solve_c3(&C3Params::default(), &LeafOptions::default(), &c).unwrap();
        let c4 = solve_c4(&C4Params::default(), &LeafOptions::default(), &c).unwrap();
        assert!(
            (15.0..=24.0).contains(&c3.discrimination),
            "C3 {}",
            c3.discrimination
        );
        assert!(
            (2.0..=6.0).contains(&c4.discrimination),
            "C4 {}",
            c4.discrimination
        );
        assert!(c4.discrimination < c3.discrimination - 10.0);
    }
}

#[test]
fn night_leaf_respires_and_has_no_discrimination() {
    // In the dark A = −Rd and gs = g0 (FvCB and Medlyn; common practice).
    let p = c3_with(&[("g0", 0.02)]);
    let c = LeafConditions {
        ppfd_umol_m2_s: 0.0,
        ..LeafConditions::default()
    };
    let s = solve_c3(&p, &LeafOptions::default(), &c).unwrap();
    assert_close(s.a_net, -s.rd, 1e-9, "A = -Rd");
    assert_close(s.g_s, 0.02, 1e-12, "gs = g0");
    assert!(s.discrimination.is_nan());
}

#[test]
fn out_of_range_conditions_are_errors_naming_the_input() {
    let bad = LeafConditions {
        vpd_kpa: -1.0,
        ..LeafConditions::default()
    };
    let err = solve_c3(&C3Params::default(), &LeafOptions::default(), &bad).unwrap_err();
    assert!(err.to_string().contains("vpd"), "{err}");
    let nan = LeafConditions {
        t_leaf_c: f64::NAN,
        ..LeafConditions::default()
    };
    assert!(solve_c4(&C4Params::default(), &LeafOptions::default(), &nan).is_err());
}

fn conditions() -> impl Strategy<Value = LeafConditions> {
    (
        -10.0..45.0f64,
        0.0..2500.0f64,
        0.0..6.0f64,
        50.0..1500.0f64,
        60.0..105.0f64,
        0.0..1.0f64,
    )
        .prop_map(|(t, i, d, ca, p, beta)| LeafConditions {
            t_leaf_c: t,
            ppfd_umol_m2_s: i,
            vpd_kpa: d,
            ca_umol_mol: ca,
            pressure_kpa: p,
            soil_beta: beta,
            ..LeafConditions::default()
        })
}

proptest! {
    // Light and CO2 responses never fall (FvCB and Collatz rates increase in I and ci; common
    // practice), nothing is NaN across the documented input ranges, and simple Δ stays in [a, b].
    #[test]
    fn responses_are_monotone_and_finite(c in conditions(), di in 1.0..500.0f64, dca in 1.0..300.0f64, g0 in 0.0..0.05f64) {
        let p3 = c3_with(&[("g0", g0)]);
        let p4 = C4Params::with_overrides([("g0", g0)]).unwrap();
        let opts = LeafOptions::default();
        let more_light = LeafConditions { ppfd_umol_m2_s: (c.ppfd_umol_m2_s + di).min(3000.0), ..c };
        let more_co2 = LeafConditions { ca_umol_mol: c.ca_umol_mol + dca, ..c };
        for (base, up) in [(c, more_light), (c, more_co2)] {
            let (a, b) = (solve_c3(&p3, &opts, &base).unwrap(), solve_c3(&p3, &opts, &up).unwrap());
            prop_assert!(b.a_net >= a.a_net - 1e-7, "C3 {} -> {}", a.a_net, b.a_net);
            let (a, b) = (solve_c4(&p4, &opts, &base).unwrap(), solve_c4(&p4, &opts, &up).unwrap());
            prop_assert!(b.a_net >= a.a_net - 1e-7, "C4 {} -> {}", a.a_net, b.a_net);
        }
        for s in [solve_c3(&p3, &opts, &c).unwrap(), solve_c4(&p4, &opts, &c).unwrap()] {
            prop_assert!(s.a_net.is_finite() && s.g_s.is_finite() && s.c_i.is_finite() && s.c_c.is_finite());
            prop_assert!(s.a_net <= 0.0 || s.discrimination.is_finite());
        }
        let simple = LeafOptions { c3_form: C3Form::Simple, ..opts };
        let s = solve_c3(&p3, &simple, &c).unwrap();
        if s.a_net > 0.0 {
            prop_assert!((4.4 - 1e-9..=27.0 + 1e-9).contains(&s.discrimination), "{}", s.discrimination);
        }
    }

    // Out-of-range input is an error, never a panic.
    #[test]
    fn out_of_range_is_an_error(t in prop_oneof![-100.0..-30.1f64, 60.1..200.0f64], v in prop_oneof![-5.0..-0.001f64, 10.01..50.0f64]) {
        let c = LeafConditions { t_leaf_c: t, ..LeafConditions::default() };
        prop_assert!(solve_c3(&C3Params::default(), &LeafOptions::default(), &c).is_err());
        let c = LeafConditions { vpd_kpa: v, ..LeafConditions::default() };
        prop_assert!(solve_c4(&C4Params::default(), &LeafOptions::default(), &c).is_err());
        prop_assert!(C3Params::with_overrides([("vcmax25", v * 1000.0)]).is_err());
    }
}
