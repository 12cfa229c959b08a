//! Isotope arithmetic, temperature responses, leaf gas exchange and leaf discrimination against
//! published equations and worked values. Each check names its source.

use isodisc_model::canopy::assimilation::{CanopyDrivers, CanopySettings, canopy_step};
use isodisc_model::canopy::radiation::TwoLeafCanopy;
use isodisc_model::discrimination::{
    C3Fractionations, C3Gradient, C4Fractionations, c3_comprehensive_apparent_e_permil,
    c3_comprehensive_permil, c3_simple_permil, c4_b4_permil, c4_permil,
};
use isodisc_model::isotopes::{VpdbRatio, discrimination_permil, product_delta_permil};
use isodisc_model::leaf::c3::{electron_limited_rate, electron_transport};
use isodisc_model::leaf::c4::vmax_at;
use isodisc_model::leaf::stomata::boundary_layer_h2o_from_wind;
use isodisc_model::leaf::{
    C3Form, C3Params, C4Params, ElectronLimit, G1Temperature, LeafConditions, LeafModel,
    LeafOptions, TemperatureSet, solve_c3, solve_c4,
};
use isodisc_model::temperature::{
    GrowthTemperature, arrhenius_factor, kattge_knorr_ds_vcmax, peaked_arrhenius_factor,
    peaked_arrhenius_optimum_c,
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
    // normalised to 25 °C, at 15 and 35 °C. They are the intercellular-based constants, the
    // default with an infinite mesophyll conductance.
    let k = c3_with(&[("gm", f64::INFINITY)]).kinetics_25();
    let table = [
        ("kc", k.kc25, k.ea_kc, [133.2, 404.9, 1145.4], 0.1),
        ("ko", k.ko25, k.ea_ko, [167.3, 278.4, 448.2], 0.1),
        (
            "gamma_star",
            k.gamma_star25,
            k.ea_gamma_star,
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
fn kinetics_basis_follows_the_mesophyll_conductance() {
    // With a finite gm the constants refer to chloroplast CO2: Bernacchi et al. 2002, Plant
    // Physiol. (from memory): Kc 272.38 µmol mol⁻¹, Ko 165.82 mmol mol⁻¹, Γ* 37.43 µmol mol⁻¹ at
    // 25 °C with 80.99, 23.72 and 24.42 kJ mol⁻¹.
    let k = C3Params::default().kinetics_25();
    assert!(C3Params::default().gm().is_finite());
    for (got, want) in [
        (k.kc25, 272.38),
        (k.ko25, 165.82),
        (k.gamma_star25, 37.43),
        (k.ea_kc, 80_990.0),
        (k.ea_ko, 23_720.0),
        (k.ea_gamma_star, 24_420.0),
    ] {
        assert_close(got, want, 1e-9, "cc-based constant");
    }
    // A value that was set is kept whatever gm is.
    let k = c3_with(&[("gm", f64::INFINITY), ("kc25", 300.0)]).kinetics_25();
    assert_close(k.kc25, 300.0, 0.0, "set kc25");
    assert_close(k.ko25, 278.4, 0.0, "ci-based ko25");
}

#[test]
fn gamma_star_scales_with_o2_not_pressure_hand_calculation() {
    // Γ* = 0.5·O/S is proportional to the O2 partial pressure: as a mole fraction it is independent
    // of P and scales with O2/210; Kc and Ko scale with 101.325/P (von Caemmerer 2000; hand
    // calculation). With gm = ∞, g0 = 0 and no boundary layer Medlyn fixes ci = ca·g1/(g1 + √D)
    // = 420·4.1/5.1 = 337.647, so A can be worked by hand at 25 °C (every temperature factor 1):
    // Jmax = (2.59 − 0.035·25)·60 = 102.9 (Kattge & Knorr 2007), J(1500) = 95.2311 (θ 0.7, α 0.3),
    // Rd = 0.9.
    //  P = 80 kPa, O2 210: Kc = 404.9·101.325/80, Ko = 278.4·101.325/80, Γ* = 42.75:
    //    Wc = 15.3074, Wj = 16.5920 → A = 14.4074 (Γ* scaled by P would give 13.8159).
    //  P = 101.325, O2 20: Γ* = 42.75·20/210 = 4.0714: Wc = 25.9378, Wj = 22.9668 → A = 22.0668
    //    (unscaled Γ* would give 15.6920).
    let p = c3_with(&[("gm", f64::INFINITY), ("g0", 0.0)]);
    for (pressure, o2, want) in [
        (80.0, 210.0, 14.407_420),
        (101.325, 20.0, 22.066_816),
        (101.325, 210.0, 15.691_968),
    ] {
        let c = LeafConditions {
            pressure_kpa: pressure,
            o2_mmol_mol: o2,
            ..LeafConditions::default()
        };
        let s = solve_c3(&p, &LeafOptions::default(), &c).unwrap();
        assert_close(s.c_i, 420.0 * 4.1 / 5.1, 1e-6, "Medlyn ci");
        assert_close(
            s.a_net,
            want,
            1e-5,
            &format!("A at {pressure} kPa, {o2} O2"),
        );
    }
}

#[test]
fn below_gamma_star_the_smaller_carboxylation_rate_limits() {
    // FvCB: A = (1 − Γ*/cc)·min(vc, vj) − Rd. With g0 = 0 and ca = 30 < Γ* = 42.75 the leaf cannot
    // fix carbon, its stomata shut and ci = cc = ca = 30 (gm = ∞). Hand calculation at 25 °C:
    // vc = 60·30/(30 + 404.9(1 + 210/278.4)) = 2.43138; vj = J·30/(4·30 + 8·42.75) with
    // J(50) = 12.3861 → 0.92902 and J(1500) = 95.2311 → 6.18384; 1 − Γ*/cc = −0.425.
    //  dark: vj = 0 → A = −Rd = −0.9 (no photorespiration without light);
    //  PPFD 50: vj < vc → A = −0.425·0.92902 − 0.9 = −1.29483;
    //  PPFD 1500: vc < vj → A = −0.425·2.43138 − 0.9 = −1.93334 (the net-rate minimum gave −3.528).
    let p = c3_with(&[("gm", f64::INFINITY), ("g0", 0.0)]);
    for (ppfd, want) in [(0.0, -0.9), (50.0, -1.294_833), (1500.0, -1.933_337)] {
        let c = LeafConditions {
            ppfd_umol_m2_s: ppfd,
            ca_umol_mol: 30.0,
            ..LeafConditions::default()
        };
        let s = solve_c3(&p, &LeafOptions::default(), &c).unwrap();
        assert_close(s.c_c, 30.0, 1e-12, "cc = ca with shut stomata");
        assert_close(s.a_net, want, 1e-5, &format!("A at PPFD {ppfd}"));
        assert!(s.discrimination.is_nan());
    }
}

#[test]
fn a_leaf_below_its_compensation_point_fixes_nothing() {
    // g1 = 0.01 at D = 4 kPa puts Medlyn's ci = ca·g1/(g1 + √D) = 2.1 µmol mol⁻¹ far below the
    // compensation point: the stomata shut, A = 0, no Δ (hand reasoning from Medlyn et al. 2011;
    // the earlier code reported Δ = 7.3‰ here).
    let c = LeafConditions {
        vpd_kpa: 4.0,
        ..LeafConditions::default()
    };
    for opts in [
        LeafOptions::default(),
        LeafOptions {
            c3_form: C3Form::Simple,
            ..LeafOptions::default()
        },
    ] {
        let s = solve_c3(&c3_with(&[("g1", 0.01)]), &opts, &c).unwrap();
        assert_eq!(s.a_net, 0.0);
        assert_eq!(s.g_s, 0.0);
        assert!(s.discrimination.is_nan() && s.d13c_assimilate.is_nan());
        // At the compensation point the demand is zero: ci lies above Γ* (µmol mol⁻¹).
        assert!(s.c_i > 37.43 && s.c_i < 80.0, "{}", s.c_i);
    }
    // A C4 leaf's compensation point is a few µmol mol⁻¹ (Collatz et al. 1992): at ci = 2.1 it
    // still fixes carbon, on the stomatal root.
    let s4 = solve_c4(
        &C4Params::with_overrides([("g1", 0.01)]).unwrap(),
        &LeafOptions::default(),
        &c,
    )
    .unwrap();
    assert!(s4.a_net > 0.0 && s4.discrimination.is_finite());
    assert_close(s4.ci_ca, 0.01 / 2.01, 1e-9, "C4 Medlyn ci/ca");
    // The canopy books neither GPP nor Δ weight from such leaves (de Pury & Farquhar 1997 sums
    // over the classes that fix carbon).
    let leaf = LeafModel::C3(c3_with(&[("g1", 0.01)]));
    let settings = CanopySettings::new(TwoLeafCanopy::default(), 0.3, 0.85).unwrap();
    let flux = canopy_step(
        &leaf,
        &LeafOptions::default(),
        &settings,
        &CanopyDrivers {
            leaf: c,
            ppfd_beam_umol_m2_s: 1200.0,
            ppfd_diffuse_umol_m2_s: 300.0,
            cos_zenith: 0.8,
            lai_m2_m2: 3.0,
        },
    )
    .unwrap();
    assert_eq!(flux.gpp_umol_m2_s, 0.0);
    assert!(flux.discrimination_permil.is_nan());
}

#[test]
fn infinite_values_are_accepted_where_the_range_is_open() {
    // `inf` means no resistance (gb, gm) or no limit (tpu25); elsewhere it is out of range
    // (common practice).
    for name in ["gb", "gm", "tpu25"] {
        let p = c3_with(&[(name, f64::INFINITY)]);
        assert!(p.get(name).unwrap().is_infinite());
    }
    assert!(C4Params::with_overrides([("gb", f64::INFINITY)]).is_ok());
    assert!(C3Params::with_overrides([("g1", f64::INFINITY)]).is_err());
    assert!(C3Params::with_overrides([("gm", f64::NEG_INFINITY)]).is_err());
}

#[test]
fn default_c3_leaf_lies_within_published_leaf_values() {
    // C3 leaves about 18–22‰ at 25 °C, 1 kPa, 420 µmol mol⁻¹, full light (global leaf compilations,
    // e.g. Kohn 2010, PNAS: C3 leaves near 19–21‰ at moderate rainfall; from memory). The earlier
    // default (b = 29‰ with gm = ∞) gave 23.0‰.
    let s = solve_c3(
        &C3Params::default(),
        &LeafOptions::default(),
        &LeafConditions::default(),
    )
    .unwrap();
    assert!(
        (18.0..=22.0).contains(&s.discrimination),
        "{}",
        s.discrimination
    );
    // The drawdown ci − cc = A/gm carries the difference (Evans et al. 1986): cc < ci.
    assert_close(s.c_i - s.c_c, s.a_net / 0.25, 1e-9, "A/gm at 25 °C");
}

#[test]
fn apparent_respiratory_fractionation_hand_calculation() {
    // e′ = e + δp − δsub (Wingate et al. 2007; Tcherkez et al. 2011; from memory). Gradient:
    // ca = cs = 400, ci = 280, cc = 200, A = 10, Rd = 1, Γ* = 40 with b 29, f 11.6, e 0:
    // Δ₀ = (4.4·120 + 1.8·80 + 29·200 − 11.6·40)/400 = 15.02‰; w = 1·160/(11·400) = 0.0363636.
    // δsub = −26‰, δa = −8.5‰: Δ = 15.02 − w(δp(Δ) + 26) solved by hand iteration → 14.913432‰,
    // δp = −23.069389‰.
    let g = C3Gradient {
        ca: 400.0,
        cs: 400.0,
        ci: 280.0,
        cc: 200.0,
        a_net: 10.0,
        rd: 1.0,
        gamma_star: 40.0,
    };
    let fr = C3Fractionations {
        ab: 2.9,
        a: 4.4,
        es: 1.1,
        al: 0.7,
        b: 29.0,
        e: 0.0,
        f: 11.6,
    };
    assert_close(c3_comprehensive_permil(&g, &fr), 15.02, 1e-12, "Δ₀");
    let d = c3_comprehensive_apparent_e_permil(&g, &fr, -8.5, -26.0);
    assert_close(d, 14.913_432, 1e-6, "Δ with e′");
    // A substrate with the δ of the assimilate it forms gives back the plain form (e′ = e).
    for e in [0.0, -3.0] {
        let fr = C3Fractionations { e, ..fr };
        let plain = c3_comprehensive_permil(&g, &fr);
        let same =
            c3_comprehensive_apparent_e_permil(&g, &fr, -8.5, product_delta_permil(-8.5, plain));
        assert_close(same, plain, 1e-10, "e′ = e");
    }
    // Through the leaf: an older, less depleted substrate (δsub > δp) raises Δ.
    let base = LeafConditions::default();
    let plain = solve_c3(&C3Params::default(), &LeafOptions::default(), &base).unwrap();
    let older = solve_c3(
        &C3Params::default(),
        &LeafOptions::default(),
        &LeafConditions {
            d13c_substrate_permil: Some(plain.d13c_assimilate + 3.0),
            ..base
        },
    )
    .unwrap();
    assert!(older.discrimination > plain.discrimination);
}

#[test]
fn acclimated_and_mesophyll_temperature_responses() {
    // Kattge & Knorr 2007 (from memory), optimum worked from the peaked Arrhenius equation:
    // Vcmax with Ha 71.513 kJ, Hd 200 kJ, ΔS = 668.39 − 1.07·Tg peaks at 31.2, 36.2 and 38.8 °C
    // for Tg = 15, 25, 30 °C; Jmax (Ha 49.884, ΔS = 659.70 − 0.75·Tg) at 31.0, 34.5, 36.3 °C.
    for (tg, v_opt, j_opt) in [
        (15.0, 31.17, 30.98),
        (25.0, 36.20, 34.49),
        (30.0, 38.78, 36.28),
    ] {
        let p = C3Params::default();
        let v = p.vcmax_response(TemperatureSet::Acclimated, tg);
        let j = p.jmax_response(TemperatureSet::Acclimated, tg);
        assert_close(
            peaked_arrhenius_optimum_c(v.ha_j_mol, v.hd_j_mol, v.ds_j_mol_k),
            v_opt,
            0.01,
            "Vcmax Topt",
        );
        assert_close(
            peaked_arrhenius_optimum_c(j.ha_j_mol, j.hd_j_mol, j.ds_j_mol_k),
            j_opt,
            0.01,
            "Jmax Topt",
        );
        // Jmax25/Vcmax25 = 2.59 − 0.035·Tg.
        assert_close(
            p.jmax25_for(TemperatureSet::Acclimated, tg) / p.vcmax25(),
            2.59 - 0.035 * tg,
            1e-12,
            "rJV",
        );
    }
    // Growth temperatures beyond the fits' data are held at 11 and 35 °C.
    assert_close(
        kattge_knorr_ds_vcmax(50.0),
        kattge_knorr_ds_vcmax(35.0),
        0.0,
        "held",
    );
    // The fixed set keeps the earlier constants (Bernacchi et al. 2001; Medlyn et al. 2002).
    let fixed = C3Params::default().vcmax_response(TemperatureSet::Fixed, 5.0);
    assert_close(fixed.factor(35.0), 1.199, 0.0005, "fixed f(35)");
    // gm: Bernacchi et al. 2002 (from memory), Ha 49.6, Hd 437.4 kJ, ΔS 1.4 kJ K⁻¹: optimum
    // 35.5 °C, factor 0.4995 at 15 °C and 1.7463 at 35 °C (worked from the equation).
    let p = C3Params::default();
    assert_close(
        peaked_arrhenius_optimum_c(p.ha_gm(), p.hd_gm(), p.ds_gm()),
        35.51,
        0.01,
        "gm Topt",
    );
    for (t, want) in [(15.0, 0.4995), (35.0, 1.7463)] {
        assert_close(
            peaked_arrhenius_factor(p.ha_gm(), p.hd_gm(), p.ds_gm(), t),
            want,
            0.0001,
            "gm factor",
        );
    }
    // A warm-grown leaf photosynthesises more at 38 °C than a cool-grown one (Kattge & Knorr 2007).
    let at38 = |tg: f64| {
        solve_c3(
            &C3Params::default(),
            &LeafOptions::default(),
            &LeafConditions {
                t_leaf_c: 38.0,
                t_growth_c: tg,
                ..LeafConditions::default()
            },
        )
        .unwrap()
        .a_net
    };
    assert!(at38(30.0) > at38(12.0));
}

#[test]
fn growth_temperature_is_the_mean_of_the_preceding_30_days() {
    // Hand calculation: day d (1..=40) has the constant temperature d °C; on day 41 the preceding
    // 30 days are 11..=40 with mean 25.5 °C; on day 1 only the steps so far count.
    let mut g = GrowthTemperature::new();
    assert_close(g.push((2025, 1), 4.0), 4.0, 0.0, "first step");
    assert_close(g.push((2025, 1), 2.0), 3.0, 0.0, "first day so far");
    let mut g = GrowthTemperature::new();
    for d in 1..=40u32 {
        for _ in 0..24 {
            g.push((2025, d), f64::from(d));
        }
    }
    assert_close(g.push((2025, 41), 100.0), 25.5, 1e-12, "30-day mean");
}

#[test]
fn boundary_layer_from_wind_has_the_outdoor_enhancement() {
    // Campbell & Norman 1998 (from memory): gb = 1.4 × 0.147·√(u/d); u = 2 m s⁻¹, d = 0.05 m →
    // 1.4·0.147·√40 = 1.30159 mol m⁻² s⁻¹ (hand calculation).
    assert_close(
        boundary_layer_h2o_from_wind(2.0, 0.05),
        1.301_593,
        1e-6,
        "gb",
    );
}

#[test]
fn c4_quantum_yield_per_absorbed_photon_is_in_the_measured_range() {
    // C4 quantum yields 0.052–0.069 mol CO2 per absorbed photon (Ehleringer & Pearcy 1983, Plant
    // Physiol.; from memory); the parameter is per incident photon, absorptance 0.85.
    let per_absorbed = C4Params::default().alpha() / 0.85;
    assert!((0.052..=0.069).contains(&per_absorbed), "{per_absorbed}");
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
fn g1_scaled_with_gamma_star_follows_the_optimisation_theory() {
    // Medlyn et al. 2011: g1 ∝ √(Γ*·λ); at a constant λ, g1(T) = g1·√(Γ*(T)/Γ*(25 °C)). With
    // g0 = 0 and no boundary layer ci/ca = g1(T)/(g1(T) + √D). Hand calculation of the factor,
    // √exp(Ea·(T − 298.15)/(8.314·298.15·T)) with Γ*'s activation energy: 37,830 J mol⁻¹ on the ci
    // basis of Bernacchi et al. 2001 (gm = inf) and 24,420 J mol⁻¹ on the cc basis of Bernacchi et
    // al. 2002 (finite gm) — 0.76735 and 1.28098, 0.84287 and 1.17333 at 15 and 35 °C.
    let scaled = LeafOptions {
        g1_temperature: G1Temperature::GammaStar,
        ..LeafOptions::default()
    };
    for (gm, cases) in [
        (f64::INFINITY, [(15.0, 0.767_35), (35.0, 1.280_98)]),
        (0.25, [(15.0, 0.842_87), (35.0, 1.173_33)]),
    ] {
        let p = c3_with(&[("g0", 0.0), ("g1", 4.45), ("gm", gm)]);
        for (t, factor) in cases {
            let c = LeafConditions {
                t_leaf_c: t,
                vpd_kpa: 1.5,
                ..LeafConditions::default()
            };
            let s = solve_c3(&p, &scaled, &c).unwrap();
            let g1 = 4.45 * factor;
            assert_close(
                s.ci_ca,
                g1 / (g1 + 1.5f64.sqrt()),
                2e-6,
                &format!("ci/ca, gm {gm}, {t} °C"),
            );
            // The same leaf as one whose constant g1 is the scaled value.
            let fixed = c3_with(&[("g0", 0.0), ("g1", g1), ("gm", gm)]);
            let f = solve_c3(&fixed, &LeafOptions::default(), &c).unwrap();
            assert_close(s.a_net, f.a_net, 1e-4, &format!("A, gm {gm}, {t} °C"));
            assert_close(
                s.discrimination,
                f.discrimination,
                1e-4,
                &format!("Δ, gm {gm}, {t} °C"),
            );
        }
        // At 25 °C the factor is exactly 1: the same leaf as with a constant g1, bit for bit.
        let c = LeafConditions::default();
        assert_eq!(
            solve_c3(&p, &scaled, &c).unwrap(),
            solve_c3(&p, &LeafOptions::default(), &c).unwrap()
        );
    }
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
    let p = c3_with(&[("e", 0.0), ("f", 0.0), ("b", 27.0), ("gm", f64::INFINITY)]);
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
        &c3_with(&[("g0", 0.01), ("gm", f64::INFINITY)]),
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
fn reported_flaky_case_light_below_gamma_star() {
    // The case that made the monotonicity property fail (soil β 0, ca 50, D 0, 43.09 °C, 60 kPa),
    // with the earlier constants (gm = ∞, fixed set): ca lies below Γ* (42.75 at 25 °C, Ci basis
    // → 102 at 43.09 °C), so A falls with light until the Rubisco rate limits, then stays
    // (FvCB; hand reasoning). The earlier code let A fall without bound (−3.38 → −5.19).
    let p = c3_with(&[("gm", f64::INFINITY), ("g0", 0.0)]);
    let opts = LeafOptions {
        temperature_set: TemperatureSet::Fixed,
        ..LeafOptions::default()
    };
    let at = |ppfd: f64| {
        solve_c3(
            &p,
            &opts,
            &LeafConditions {
                t_leaf_c: 43.09,
                ppfd_umol_m2_s: ppfd,
                vpd_kpa: 0.0,
                ca_umol_mol: 50.0,
                pressure_kpa: 60.0,
                soil_beta: 0.0,
                ..LeafConditions::default()
            },
        )
        .unwrap()
    };
    let a: Vec<f64> = [0.0, 20.0, 100.0, 500.0, 1500.0, 3000.0]
        .iter()
        .map(|&i| at(i).a_net)
        .collect();
    assert!(a.windows(2).all(|w| w[1] <= w[0] + 1e-12), "{a:?}");
    assert_close(a[0], -at(0.0).rd, 1e-12, "dark: A = -Rd");
    assert_close(a[4], a[5], 1e-12, "Rubisco-limited at high light");
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

fn mesophyll() -> impl Strategy<Value = f64> {
    prop_oneof![Just(f64::INFINITY), 0.05..1.0f64]
}

proptest! {
    #![proptest_config(crate::common::proptest_config("isotopes_leaf", 256))]

    // CO2 responses never fall (FvCB and Collatz rates increase in ci). Light responses never fall
    // where cc lies above Γ* (A + Rd > 0); below Γ* more light means more photorespiratory release,
    // so A never rises there: A = (1 − Γ*/cc)·min(vc, vj) − Rd with 1 − Γ*/cc < 0 (Farquhar et al.
    // 1980). The side of Γ* does not depend on light. Nothing is NaN across the documented input
    // ranges, and simple Δ stays in [a, b].
    #[test]
    fn responses_are_monotone_and_finite(
        c in conditions(),
        di in 1.0..500.0f64,
        dca in 1.0..300.0f64,
        g0 in 0.0..0.05f64,
        gm in mesophyll(),
        fixed in any::<bool>(),
        t_growth in 0.0..40.0f64,
    ) {
        let p3 = c3_with(&[("g0", g0), ("gm", gm)]);
        let p4 = C4Params::with_overrides([("g0", g0)]).unwrap();
        let opts = LeafOptions {
            temperature_set: if fixed { TemperatureSet::Fixed } else { TemperatureSet::Acclimated },
            ..LeafOptions::default()
        };
        let c = LeafConditions { t_growth_c: t_growth, ..c };
        let more_light = LeafConditions { ppfd_umol_m2_s: (c.ppfd_umol_m2_s + di).min(3000.0), ..c };
        let more_co2 = LeafConditions { ca_umol_mol: c.ca_umol_mol + dca, ..c };
        let (a, b) = (solve_c3(&p3, &opts, &c).unwrap(), solve_c3(&p3, &opts, &more_light).unwrap());
        let below_gamma_star = a.a_net + a.rd < 0.0 || b.a_net + b.rd < 0.0;
        if below_gamma_star {
            prop_assert!(b.a_net <= a.a_net + 1e-7, "C3 below Γ* {} -> {}", a.a_net, b.a_net);
        } else {
            prop_assert!(b.a_net >= a.a_net - 1e-7, "C3 {} -> {}", a.a_net, b.a_net);
        }
        let (a, b) = (solve_c3(&p3, &opts, &c).unwrap(), solve_c3(&p3, &opts, &more_co2).unwrap());
        prop_assert!(b.a_net >= a.a_net - 1e-7, "C3 CO2 {} -> {}", a.a_net, b.a_net);
        for up in [more_light, more_co2] {
            let (a, b) = (solve_c4(&p4, &opts, &c).unwrap(), solve_c4(&p4, &opts, &up).unwrap());
            prop_assert!(b.a_net >= a.a_net - 1e-7, "C4 {} -> {}", a.a_net, b.a_net);
        }
        for s in [solve_c3(&p3, &opts, &c).unwrap(), solve_c4(&p4, &opts, &c).unwrap()] {
            prop_assert!(s.a_net.is_finite() && s.g_s.is_finite() && s.c_i.is_finite() && s.c_c.is_finite());
            prop_assert!(s.a_net <= 0.0 || s.discrimination.is_finite());
            prop_assert!(s.a_net > 0.0 || s.discrimination.is_nan());
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
