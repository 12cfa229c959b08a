//! Leaf gas exchange and 13C discrimination: one leaf, one set of conditions.
//!
//! - [`c3`]: Farquhar–von Caemmerer–Berry (1980) photosynthesis with Bernacchi et al. kinetics and a
//!   finite, temperature-dependent mesophyll conductance;
//! - [`c4`]: Collatz, Ribas-Carbo & Berry (1992) photosynthesis;
//! - [`stomata`]: Medlyn et al. (2011) stomatal conductance;
//! - [`params`]: the validated parameter sets;
//! - the coupled solution of A, gs, ci and cc, by a bracketing root search that cannot diverge.
//!
//! Units: leaf fluxes µmol m⁻² s⁻¹ (leaf area), conductances mol m⁻² s⁻¹ (gs for H2O), CO2 mole
//! fractions µmol mol⁻¹, temperature °C, VPD and pressure kPa, δ and Δ in ‰.

pub mod c3;
pub mod c4;
pub mod params;
mod solve;
pub mod stomata;

use std::fmt;

use crate::discrimination::{
    C3Fractionations, C3Gradient, C4Fractionations, c3_comprehensive_apparent_e_permil,
    c3_comprehensive_permil, c3_simple_permil, c4_permil,
};
use crate::error::{Result, check_input};
use crate::isotopes::product_delta_permil;
pub use params::{C3Params, C4Params, Kinetics25, ParamSpec, PeakedResponse};
pub use solve::{CI_TOL_UMOL_MOL, RootSearch};
use stomata::Medlyn;

/// Photosynthetic pathway.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Pathway {
    /// C3 (Farquhar–von Caemmerer–Berry).
    C3,
    /// C4 (Collatz et al. 1992).
    C4,
}

impl Pathway {
    /// `c3` or `c4`.
    pub fn as_str(self) -> &'static str {
        match self {
            Pathway::C3 => "c3",
            Pathway::C4 => "c4",
        }
    }

    /// The parameter table of this pathway.
    pub fn specs(self) -> &'static [ParamSpec] {
        match self {
            Pathway::C3 => C3Params::SPECS,
            Pathway::C4 => C4Params::SPECS,
        }
    }
}

/// Which rate limits net assimilation.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Limitation {
    /// Rubisco (C3 Wc, or C4 Vmax).
    Rubisco,
    /// Electron transport (C3 Wj).
    ElectronTransport,
    /// Triose-phosphate use (C3 Wp).
    TriosePhosphate,
    /// Light (C4 αI).
    Light,
    /// CO2 supply (C4 k·ci).
    Co2,
    /// No light: the leaf only respires.
    Dark,
}

impl Limitation {
    /// Name used in output files.
    pub fn as_str(self) -> &'static str {
        match self {
            Limitation::Rubisco => "rubisco",
            Limitation::ElectronTransport => "electron-transport",
            Limitation::TriosePhosphate => "tpu",
            Limitation::Light => "light",
            Limitation::Co2 => "co2",
            Limitation::Dark => "dark",
        }
    }
}

impl fmt::Display for Limitation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The C3 electron-transport limit: NADPH-limited J/(4cc + 8Γ*) (default) or ATP-limited
/// J/(4.5cc + 10.5Γ*).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ElectronLimit {
    /// 4/8 form (Farquhar et al. 1980; von Caemmerer 2000).
    #[default]
    Nadph,
    /// 4.5/10.5 form.
    Atp,
}

/// What the soil-water factor β scales.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum BetaTarget {
    /// Photosynthetic capacity (C3 Vcmax, Jmax and TPU; C4 Vmax and k).
    Capacity,
    /// The stomatal slope g1 (default).
    #[default]
    G1,
    /// Both.
    Both,
}

/// The C3 discrimination form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum C3Form {
    /// Δ = a + (b − a)·ci/ca.
    Simple,
    /// With boundary layer, mesophyll, respiration and photorespiration terms (default).
    #[default]
    Comprehensive,
}

/// The temperature responses of C3 Vcmax and Jmax.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum TemperatureSet {
    /// Acclimated to the growth temperature (Kattge & Knorr 2007): the default.
    #[default]
    Acclimated,
    /// One set for every leaf: Bernacchi et al. (2001) Ha of Vcmax, Medlyn et al. (2002) Ha of
    /// Jmax, Hd 200 kJ mol⁻¹, ΔS 650 J mol⁻¹ K⁻¹, Jmax25 = 1.67·Vcmax25.
    Fixed,
}

impl TemperatureSet {
    /// Every set with its name, as the command line and site files spell it.
    pub const NAMES: &'static [(&'static str, TemperatureSet)] = &[
        ("acclimated", TemperatureSet::Acclimated),
        ("fixed", TemperatureSet::Fixed),
    ];

    /// The set's name.
    pub fn as_str(self) -> &'static str {
        match self {
            TemperatureSet::Acclimated => "acclimated",
            TemperatureSet::Fixed => "fixed",
        }
    }

    /// The set called `name`, if any.
    pub fn from_name(name: &str) -> Option<Self> {
        Self::NAMES
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, s)| *s)
    }
}

/// How the C3 stomatal slope g1 follows leaf temperature.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum G1Temperature {
    /// g1 is the parameter at every leaf temperature: the default, as in the per-type fits of
    /// Lin et al. (2015), which take one g1 per leaf.
    #[default]
    Constant,
    /// g1 × √(Γ*(T)/Γ*(25 °C)) with the leaf's own Γ* response: the optimisation result of Medlyn
    /// et al. (2011), g1 ∝ √(Γ*·λ), at a constant marginal water cost λ. C3 only.
    GammaStar,
}

impl G1Temperature {
    /// Every choice with its name, as the command line and site files spell it.
    pub const NAMES: &'static [(&'static str, G1Temperature)] = &[
        ("constant", G1Temperature::Constant),
        ("gamma-star", G1Temperature::GammaStar),
    ];

    /// The choice called `name`, if any.
    pub fn from_name(name: &str) -> Option<Self> {
        Self::NAMES
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, s)| *s)
    }

    /// The factor on the g1 of `p` at leaf temperature `t_leaf_c` (°C): exactly 1, so that the
    /// default leaves g1 as it is to the bit, or √(Γ*(T)/Γ*(25 °C)) = √exp(Ea·(T − 298.15)/(298.15·R·T)) with Γ*'s activation energy.
    pub fn factor(self, p: &C3Params, t_leaf_c: f64) -> f64 {
        match self {
            G1Temperature::Constant => 1.0,
            G1Temperature::GammaStar => {
                crate::temperature::arrhenius_factor(p.kinetics_25().ea_gamma_star, t_leaf_c).sqrt()
            }
        }
    }
}

/// Settings of the leaf model that are choices rather than numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct LeafOptions {
    /// C3 electron-transport form.
    pub electron_limit: ElectronLimit,
    /// What soil-water stress scales.
    pub beta_target: BetaTarget,
    /// C3 discrimination form.
    pub c3_form: C3Form,
    /// C3 temperature responses of Vcmax and Jmax.
    pub temperature_set: TemperatureSet,
    /// How the C3 stomatal slope follows leaf temperature.
    pub g1_temperature: G1Temperature,
}

/// The environment of one leaf.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LeafConditions {
    /// Leaf temperature (°C), −30 to 60.
    pub t_leaf_c: f64,
    /// Incident PPFD (µmol photons m⁻² s⁻¹), 0 to 3000.
    pub ppfd_umol_m2_s: f64,
    /// Leaf-to-air vapour pressure deficit (kPa), 0 to 10.
    pub vpd_kpa: f64,
    /// CO2 of the ambient air (µmol mol⁻¹), 1 to 5000.
    pub ca_umol_mol: f64,
    /// Air pressure (kPa), 30 to 110.
    pub pressure_kpa: f64,
    /// O2 (mmol mol⁻¹), 0 to 1000.
    pub o2_mmol_mol: f64,
    /// δ13C of the ambient CO2 (‰ vs VPDB), −50 to 50.
    pub d13c_air_permil: f64,
    /// Soil-water factor β (0–1; 1 = no stress).
    pub soil_beta: f64,
    /// Growth temperature (°C), −70 to 60: the mean air temperature of the preceding 30 days, for
    /// the acclimated temperature set.
    pub t_growth_c: f64,
    /// δ13C of the substrate of day respiration (‰ vs VPDB), if known: the C3 respiration term then
    /// uses the apparent e′ = e + δ(assimilate) − δ(substrate) (Wingate et al. 2007; Tcherkez et al.
    /// 2011; from memory). None: the substrate is the current assimilate (e′ = e).
    pub d13c_substrate_permil: Option<f64>,
}

impl Default for LeafConditions {
    fn default() -> Self {
        Self {
            t_leaf_c: 25.0,
            ppfd_umol_m2_s: 1500.0,
            vpd_kpa: 1.0,
            ca_umol_mol: 420.0,
            pressure_kpa: 101.325,
            o2_mmol_mol: 210.0,
            d13c_air_permil: -8.5,
            soil_beta: 1.0,
            t_growth_c: 25.0,
            d13c_substrate_permil: None,
        }
    }
}

impl LeafConditions {
    /// Valid ranges of the conditions, by the names `isodisc leaf` uses, with units.
    pub const RANGES: &'static [(&'static str, &'static str, f64, f64)] = &[
        ("t_leaf", "degC", -30.0, 60.0),
        ("ppfd", "umol m-2 s-1", 0.0, 3000.0),
        ("vpd", "kPa", 0.0, 10.0),
        ("ca", "umol mol-1", 1.0, 5000.0),
        ("pressure", "kPa", 30.0, 110.0),
        ("o2", "mmol mol-1", 0.0, 1000.0),
        ("d13c_air", "permil", -50.0, 50.0),
        ("soil_beta", "-", 0.0, 1.0),
        ("t_growth", "degC", -70.0, 60.0),
    ];

    /// Checks every condition against [`Self::RANGES`]; the error names the condition.
    pub fn validate(&self) -> Result<()> {
        let values = [
            self.t_leaf_c,
            self.ppfd_umol_m2_s,
            self.vpd_kpa,
            self.ca_umol_mol,
            self.pressure_kpa,
            self.o2_mmol_mol,
            self.d13c_air_permil,
            self.soil_beta,
            self.t_growth_c,
        ];
        for ((name, _, min, max), v) in Self::RANGES.iter().zip(values) {
            check_input(name, v, *min, *max)?;
        }
        if let Some(d) = self.d13c_substrate_permil {
            check_input("d13c_substrate", d, -100.0, 50.0)?;
        }
        Ok(())
    }
}

/// The solved state of one leaf with its 13C discrimination.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LeafState {
    /// Net assimilation A (µmol m⁻² s⁻¹).
    pub a_net: f64,
    /// Day respiration Rd (µmol m⁻² s⁻¹).
    pub rd: f64,
    /// Stomatal conductance to H2O (mol m⁻² s⁻¹).
    pub g_s: f64,
    /// CO2 at the leaf surface (µmol mol⁻¹).
    pub c_s: f64,
    /// Intercellular CO2 (µmol mol⁻¹).
    pub c_i: f64,
    /// CO2 at the site of carboxylation (µmol mol⁻¹; C4: equals c_i).
    pub c_c: f64,
    /// ci/ca (dimensionless).
    pub ci_ca: f64,
    /// Which rate limits A.
    pub limitation: Limitation,
    /// 13C discrimination Δ (‰); NaN when the leaf does not fix carbon (A + Rd ≤ 0 or A ≤ 0).
    pub discrimination: f64,
    /// δ13C of the assimilate (‰ vs VPDB); NaN where Δ is.
    pub d13c_assimilate: f64,
}

fn g1_and_capacity(g1: f64, beta: f64, target: BetaTarget) -> (f64, f64) {
    match target {
        BetaTarget::Capacity => (g1, beta),
        BetaTarget::G1 => (g1 * beta, 1.0),
        BetaTarget::Both => (g1 * beta, beta),
    }
}

/// Solves a C3 leaf: FvCB photosynthesis, Medlyn stomata, optional boundary-layer and mesophyll
/// conductances, and the discrimination form chosen in `options`.
pub fn solve_c3(p: &C3Params, options: &LeafOptions, c: &LeafConditions) -> Result<LeafState> {
    solve_c3_with(p, options, c, RootSearch::Newton)
}

/// [`solve_c3`] with the root search `search` (the reference [`RootSearch::Brent`] for checks).
pub fn solve_c3_with(
    p: &C3Params,
    options: &LeafOptions,
    c: &LeafConditions,
    search: RootSearch,
) -> Result<LeafState> {
    c.validate()?;
    solve_c3_at(
        p,
        options,
        c,
        &c3::C3Temperature::new(p, options, c),
        search,
    )
}

/// [`solve_c3`] with conditions already validated and their temperature terms `tt`.
fn solve_c3_at(
    p: &C3Params,
    options: &LeafOptions,
    c: &LeafConditions,
    tt: &c3::C3Temperature,
    search: RootSearch,
) -> Result<LeafState> {
    let (g1, capacity) = g1_and_capacity(p.g1(), c.soil_beta, options.beta_target);
    let g1 = g1 * options.g1_temperature.factor(p, c.t_leaf_c);
    let kin = c3::C3Kinetics::new(p, options, c, capacity, tt);
    let stomata = Medlyn::new(p.g0(), g1, c.vpd_kpa);
    let s = solve::solve(|ci| kin.demand(ci), &stomata, c.ca_umol_mol, p.gb(), search)?;
    let ca = c.ca_umol_mol;
    let discrimination = if s.a_net <= 0.0 {
        f64::NAN
    } else {
        match options.c3_form {
            C3Form::Simple => c3_simple_permil(s.ci / ca, p.a(), p.b_for(false)),
            C3Form::Comprehensive => {
                let g = C3Gradient {
                    ca,
                    cs: s.cs,
                    ci: s.ci,
                    cc: s.cc,
                    a_net: s.a_net,
                    rd: kin.rd,
                    gamma_star: kin.gamma_star,
                };
                let fr = C3Fractionations {
                    ab: p.ab(),
                    a: p.a(),
                    es: p.es(),
                    al: p.al(),
                    b: p.b_for(true),
                    e: p.e(),
                    f: p.f(),
                };
                match c.d13c_substrate_permil {
                    Some(sub) => {
                        c3_comprehensive_apparent_e_permil(&g, &fr, c.d13c_air_permil, sub)
                    }
                    None => c3_comprehensive_permil(&g, &fr),
                }
            }
        }
    };
    Ok(finish(s, kin.rd, ca, c.d13c_air_permil, discrimination))
}

/// Solves a C4 leaf: Collatz photosynthesis, Medlyn stomata, optional boundary layer, and the
/// Farquhar (1983) discrimination with leakiness.
pub fn solve_c4(p: &C4Params, options: &LeafOptions, c: &LeafConditions) -> Result<LeafState> {
    solve_c4_with(p, options, c, RootSearch::Newton)
}

/// [`solve_c4`] with the root search `search` (the reference [`RootSearch::Brent`] for checks).
pub fn solve_c4_with(
    p: &C4Params,
    options: &LeafOptions,
    c: &LeafConditions,
    search: RootSearch,
) -> Result<LeafState> {
    c.validate()?;
    solve_c4_at(
        p,
        options,
        c,
        &c4::C4Temperature::new(p, c.t_leaf_c),
        search,
    )
}

/// [`solve_c4`] with conditions already validated and their temperature terms `tt`.
fn solve_c4_at(
    p: &C4Params,
    options: &LeafOptions,
    c: &LeafConditions,
    tt: &c4::C4Temperature,
    search: RootSearch,
) -> Result<LeafState> {
    let (g1, capacity) = g1_and_capacity(p.g1(), c.soil_beta, options.beta_target);
    let kin = c4::C4Kinetics::new(p, c.ppfd_umol_m2_s, capacity, tt);
    let stomata = Medlyn::new(p.g0(), g1, c.vpd_kpa);
    let s = solve::solve(
        |ci| {
            let (a, da, lim) = kin.demand(ci);
            (a, da, ci, lim)
        },
        &stomata,
        c.ca_umol_mol,
        p.gb(),
        search,
    )?;
    let ca = c.ca_umol_mol;
    let discrimination = if s.a_net <= 0.0 {
        f64::NAN
    } else {
        c4_permil(
            ca,
            s.cs,
            s.ci,
            c.t_leaf_c,
            &C4Fractionations {
                ab: p.ab(),
                a: p.a(),
                b3: p.b3(),
                s: p.s(),
                leakiness: p.leakiness(),
            },
        )
    };
    Ok(finish(s, kin.rd, ca, c.d13c_air_permil, discrimination))
}

fn finish(s: solve::Coupled, rd: f64, ca: f64, d13c_air: f64, discrimination: f64) -> LeafState {
    LeafState {
        a_net: s.a_net,
        rd,
        g_s: s.gs,
        c_s: s.cs,
        c_i: s.ci,
        c_c: s.cc,
        ci_ca: s.ci / ca,
        limitation: s.limitation,
        discrimination,
        d13c_assimilate: product_delta_permil(d13c_air, discrimination),
    }
}

/// A leaf of either pathway with its parameters: what the runner and the canopy hold.
#[derive(Debug, Clone, PartialEq)]
pub enum LeafModel {
    /// A C3 leaf.
    C3(C3Params),
    /// A C4 leaf.
    C4(C4Params),
}

impl LeafModel {
    /// Default parameters of the pathway.
    pub fn default_for(pathway: Pathway) -> Self {
        match pathway {
            Pathway::C3 => LeafModel::C3(C3Params::default()),
            Pathway::C4 => LeafModel::C4(C4Params::default()),
        }
    }

    /// The pathway.
    pub fn pathway(&self) -> Pathway {
        match self {
            LeafModel::C3(_) => Pathway::C3,
            LeafModel::C4(_) => Pathway::C4,
        }
    }

    /// Sets a parameter by name (validated).
    pub fn set(&mut self, name: &str, value: f64) -> Result<()> {
        match self {
            LeafModel::C3(p) => p.set(name, value),
            LeafModel::C4(p) => p.set(name, value),
        }
    }

    /// A parameter's value in use under `options` and growth temperature `t_growth_c` (°C): the
    /// set value or its resolved "auto" default (see [`C3Params::in_use`]).
    pub fn in_use(&self, name: &str, options: &LeafOptions, t_growth_c: f64) -> Option<f64> {
        match self {
            LeafModel::C3(p) => p.in_use(name, options, t_growth_c),
            LeafModel::C4(p) => p.get(name),
        }
    }

    /// A parameter by name.
    pub fn get(&self, name: &str) -> Option<f64> {
        match self {
            LeafModel::C3(p) => p.get(name),
            LeafModel::C4(p) => p.get(name),
        }
    }

    /// The same leaf with the boundary-layer conductance to H2O `gb` (mol m⁻² s⁻¹), checked as
    /// [`LeafModel::set`] checks it.
    pub fn with_boundary_layer(&self, gb: f64) -> Result<Self> {
        Ok(match self {
            LeafModel::C3(p) => LeafModel::C3(p.with_boundary_layer(gb)?),
            LeafModel::C4(p) => LeafModel::C4(p.with_boundary_layer(gb)?),
        })
    }

    /// The same leaf with capacity and day respiration scaled by `factor` (see
    /// [`C3Params::with_capacity_scaled`]).
    pub fn with_capacity_scaled(&self, factor: f64) -> Self {
        match self {
            LeafModel::C3(p) => LeafModel::C3(p.with_capacity_scaled(factor)),
            LeafModel::C4(p) => LeafModel::C4(p.with_capacity_scaled(factor)),
        }
    }

    /// Makes this leaf, a copy of `base`, into `base` with the boundary layer `gb` (when there
    /// is one; `base`'s otherwise) and its capacity scaled by `factor` (when there is one), in
    /// place: what [`LeafModel::with_boundary_layer`] and [`LeafModel::with_capacity_scaled`]
    /// give, to the bit, without copying the leaf every step. Everything else must already be
    /// `base`'s.
    pub(crate) fn adjust_from(
        &mut self,
        base: &LeafModel,
        gb: Option<f64>,
        factor: Option<f64>,
    ) -> Result<()> {
        if std::mem::discriminant(self) != std::mem::discriminant(base) {
            *self = base.clone();
        }
        match (self, base) {
            (LeafModel::C3(p), LeafModel::C3(b)) => {
                p.set_boundary_layer_from(b, gb)?;
                p.set_capacity_from(b, factor);
            }
            (LeafModel::C4(p), LeafModel::C4(b)) => {
                p.set_boundary_layer_from(b, gb)?;
                p.set_capacity_from(b, factor);
            }
            _ => unreachable!("made the same pathway above"),
        }
        Ok(())
    }

    /// Solves the leaf.
    pub fn solve(&self, options: &LeafOptions, c: &LeafConditions) -> Result<LeafState> {
        match self {
            LeafModel::C3(p) => solve_c3(p, options, c),
            LeafModel::C4(p) => solve_c4(p, options, c),
        }
    }

    /// What the temperature terms of this leaf at the temperatures, pressure and O2 of `c` (its
    /// light aside) are computed from; every capacity scaling of the leaf
    /// ([`LeafModel::with_capacity_scaled`]) and its boundary layer leave them alone.
    pub(crate) fn temperature_inputs(
        &self,
        options: &LeafOptions,
        c: &LeafConditions,
    ) -> TemperatureInputs {
        match self {
            LeafModel::C3(p) => TemperatureInputs::C3(c3::C3Temperature::inputs(p, options, c)),
            LeafModel::C4(p) => TemperatureInputs::C4(c4::C4Temperature::inputs(p, c.t_leaf_c)),
        }
    }

    /// The leaf's temperature terms at the conditions `c` (their light aside) with what they were
    /// computed from, so that other runs can use them where their own leaf and conditions give the
    /// same inputs bit for bit (see [`crate::canopy::assimilation::canopy_step_shared`]).
    pub fn shared_temperature(
        &self,
        options: &LeafOptions,
        c: &LeafConditions,
    ) -> SharedTemperature {
        let inputs = self.temperature_inputs(options, c);
        SharedTemperature {
            inputs,
            terms: inputs.terms(),
        }
    }

    /// [`LeafModel::solve`] for conditions already validated, with the temperature terms `tt` of
    /// this leaf or of a capacity scaling of it at the same conditions.
    pub(crate) fn solve_at(
        &self,
        options: &LeafOptions,
        c: &LeafConditions,
        tt: &LeafTemperature,
    ) -> Result<LeafState> {
        match (self, tt) {
            (LeafModel::C3(p), LeafTemperature::C3(t)) => {
                solve_c3_at(p, options, c, t, RootSearch::Newton)
            }
            (LeafModel::C4(p), LeafTemperature::C4(t)) => {
                solve_c4_at(p, options, c, t, RootSearch::Newton)
            }
            _ => self.solve(options, c),
        }
    }

    /// Net assimilation, day respiration (µmol m⁻² s⁻¹) and stomatal conductance (mol m⁻² s⁻¹)
    /// of the leaf in the dark (PPFD 0) at validated conditions `c`, with its temperature terms
    /// `tt`: exactly what [`LeafModel::solve`] gives, without the root search, where that has a
    /// closed form. With no light the demand is A = −Rd whatever ci (C4: no gross assimilation;
    /// C3 with infinite gm: Wj = 0), so stomata stay at g0 (shut at g0 = 0). A C3 leaf with a
    /// finite gm takes A from the quadratic in A, which equals −Rd only to round-off: with g0 = 0
    /// its stomata shut at ci = ca and A is the demand there, as the solver takes it; with g0 > 0
    /// only the root search gives the solver's bits, so None.
    pub(crate) fn dark(
        &self,
        options: &LeafOptions,
        c: &LeafConditions,
        tt: &LeafTemperature,
    ) -> Option<(f64, f64, f64)> {
        let shut = |g0: f64| if g0 <= 0.0 { 0.0 } else { g0 };
        match (self, tt) {
            (LeafModel::C4(p), LeafTemperature::C4(t)) => {
                let rd = t.rd(p);
                Some((0.0 - rd, rd, shut(p.g0())))
            }
            (LeafModel::C3(p), LeafTemperature::C3(t)) if t.gm().is_infinite() => {
                let rd = t.rd_dark(p);
                Some((0.0 - rd, rd, shut(p.g0())))
            }
            (LeafModel::C3(p), LeafTemperature::C3(t)) if p.g0() <= 0.0 => {
                let (_, capacity) = g1_and_capacity(p.g1(), c.soil_beta, options.beta_target);
                let kin = c3::C3Kinetics::new(p, options, c, capacity, t);
                let (a, _, _, _) = kin.demand(c.ca_umol_mol);
                (a <= 0.0).then_some((a, kin.rd, 0.0))
            }
            _ => None,
        }
    }
}

/// A leaf's temperature terms (from [`TemperatureInputs::terms`]).
#[derive(Debug, Clone, Copy)]
pub(crate) enum LeafTemperature {
    C3(c3::C3Temperature),
    C4(c4::C4Temperature),
}

/// What a leaf's temperature terms are computed from (see [`LeafModel::temperature_inputs`]).
#[derive(Debug, Clone, Copy)]
pub(crate) enum TemperatureInputs {
    C3(c3::C3TemperatureInputs),
    C4(c4::C4TemperatureInputs),
}

impl TemperatureInputs {
    /// The terms these inputs give.
    pub fn terms(&self) -> LeafTemperature {
        match self {
            TemperatureInputs::C3(x) => LeafTemperature::C3(c3::C3Temperature::from_inputs(x)),
            TemperatureInputs::C4(x) => LeafTemperature::C4(c4::C4Temperature::from_inputs(x)),
        }
    }

    /// Whether `other` holds the same inputs, bit for bit.
    pub fn same_as(&self, other: &Self) -> bool {
        match (self, other) {
            (TemperatureInputs::C3(a), TemperatureInputs::C3(b)) => a.same_as(b),
            (TemperatureInputs::C4(a), TemperatureInputs::C4(b)) => a.same_as(b),
            _ => false,
        }
    }
}

/// A leaf's temperature terms (Arrhenius and peaked Arrhenius factors, Kc, Ko, Γ*, gm at leaf
/// temperature) with the inputs they came from ([`LeafModel::shared_temperature`]).
#[derive(Debug, Clone, Copy)]
pub struct SharedTemperature {
    inputs: TemperatureInputs,
    terms: LeafTemperature,
}

/// Equal when computed from the same inputs, bit for bit (the terms follow from them).
impl PartialEq for SharedTemperature {
    fn eq(&self, other: &Self) -> bool {
        self.inputs.same_as(&other.inputs)
    }
}

impl SharedTemperature {
    /// These terms if they were computed from `inputs`, bit for bit.
    pub(crate) fn terms_for(&self, inputs: &TemperatureInputs) -> Option<LeafTemperature> {
        self.inputs.same_as(inputs).then_some(self.terms)
    }
}
