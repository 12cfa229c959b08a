//! Numerical methods of the model against reference methods: the coupled leaf's Newton search
//! (safeguarded by its bracket) against Brent's bracketing method run to a far tighter tolerance
//! (common practice: a fast method is checked against a slow, robust one on the same problem).

use isodisc_model::leaf::{
    C3Params, C4Params, CI_TOL_UMOL_MOL, ElectronLimit, LeafConditions, LeafOptions, LeafState,
    RootSearch, solve_c3_with, solve_c4_with,
};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};

/// The reference: Brent's method to 1e-13 µmol mol⁻¹, four orders below the solver's tolerance.
const REFERENCE: RootSearch = RootSearch::Brent {
    ci_tol_umol_mol: 1e-13,
};

/// Agreement asked of the Newton search with the reference: ci to 1e-10 µmol mol⁻¹ (ten times
/// tighter than the tolerance it promises), and A, gs and cs to 1e-10 relative.
const CI_AGREEMENT: f64 = 1e-10;
const RELATIVE_AGREEMENT: f64 = 1e-10;
const _: () = assert!(CI_AGREEMENT < CI_TOL_UMOL_MOL);

fn conditions(rng: &mut StdRng) -> LeafConditions {
    let t = rng.random_range(-2.0..45.0);
    LeafConditions {
        t_leaf_c: t,
        // A fifth of the leaves in the dark or nearly so, where the search is hardest.
        ppfd_umol_m2_s: if rng.random_range(0.0..1.0) < 0.2 {
            rng.random_range(0.0..20.0)
        } else {
            rng.random_range(20.0..2200.0)
        },
        vpd_kpa: rng.random_range(0.0..5.0),
        ca_umol_mol: rng.random_range(120.0..1500.0),
        pressure_kpa: rng.random_range(70.0..105.0),
        soil_beta: rng.random_range(0.05..1.0),
        t_growth_c: t + rng.random_range(-8.0..8.0),
        ..LeafConditions::default()
    }
}

fn agree(what: &str, newton: &LeafState, reference: &LeafState) {
    let rel = |x: f64, y: f64| (x - y).abs() / y.abs().max(1e-3);
    assert!(
        (newton.c_i - reference.c_i).abs() <= CI_AGREEMENT,
        "{what}: ci {} vs {}",
        newton.c_i,
        reference.c_i
    );
    for (name, x, y) in [
        ("A", newton.a_net, reference.a_net),
        ("gs", newton.g_s, reference.g_s),
        ("cs", newton.c_s, reference.c_s),
        ("cc", newton.c_c, reference.c_c),
    ] {
        assert!(rel(x, y) <= RELATIVE_AGREEMENT, "{what}: {name} {x} vs {y}");
    }
    assert_eq!(newton.limitation, reference.limitation, "{what}");
    assert_eq!(
        newton.discrimination.is_nan(),
        reference.discrimination.is_nan(),
        "{what}"
    );
}

/// The Newton search finds the reference root of every C3 and C4 leaf over a seeded sweep of
/// conditions and parameter sets (boundary layer, g0, infinite gm, TPU, the ATP form).
#[test]
fn newton_search_agrees_with_a_tight_brent_search() {
    let mut rng = StdRng::seed_from_u64(20261202);
    let c3 = |o: &[(&str, f64)]| C3Params::with_overrides(o.to_vec()).unwrap();
    let c4 = |o: &[(&str, f64)]| C4Params::with_overrides(o.to_vec()).unwrap();
    let c3_leaves = [
        c3(&[]),
        c3(&[("gb", 1.2)]),
        c3(&[("g0", 0.03), ("gb", 0.6)]),
        c3(&[("gm", f64::INFINITY)]),
        c3(&[("gm", f64::INFINITY), ("g0", 0.01), ("gb", 2.0)]),
        c3(&[("tpu25", 6.0), ("g1", 7.0)]),
        c3(&[("g1", 1.5), ("vcmax25", 20.0), ("gb", 0.3)]),
    ];
    let c4_leaves = [
        c4(&[]),
        c4(&[("gb", 1.5)]),
        c4(&[("g0", 0.03), ("gb", 0.5)]),
        c4(&[("rd25", 0.0), ("g0", 0.01)]),
    ];
    let atp = LeafOptions {
        electron_limit: ElectronLimit::Atp,
        ..LeafOptions::default()
    };
    let mut solved = 0;
    for _ in 0..400 {
        let c = conditions(&mut rng);
        for p in &c3_leaves {
            for options in [LeafOptions::default(), atp] {
                let n = solve_c3_with(p, &options, &c, RootSearch::Newton).unwrap();
                let r = solve_c3_with(p, &options, &c, REFERENCE).unwrap();
                agree(&format!("C3 {p:?} at {c:?}"), &n, &r);
                solved += 1;
            }
        }
        for p in &c4_leaves {
            let options = LeafOptions::default();
            let n = solve_c4_with(p, &options, &c, RootSearch::Newton).unwrap();
            let r = solve_c4_with(p, &options, &c, REFERENCE).unwrap();
            agree(&format!("C4 {p:?} at {c:?}"), &n, &r);
            solved += 1;
        }
    }
    assert_eq!(solved, 400 * (2 * 7 + 4));
}

/// The default solve is the Newton search (common practice: the documented method is the one used).
#[test]
fn the_default_solve_is_the_newton_search() {
    let p = C3Params::with_overrides([("gb", 1.2), ("g0", 0.02)]).unwrap();
    let c = LeafConditions::default();
    let options = LeafOptions::default();
    let default = isodisc_model::leaf::solve_c3(&p, &options, &c).unwrap();
    let newton = solve_c3_with(&p, &options, &c, RootSearch::Newton).unwrap();
    assert_eq!(format!("{default:?}"), format!("{newton:?}"));
}
