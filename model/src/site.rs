//! One site, one step: solar geometry, diffuse fraction, the two-leaf canopy of each pathway on its
//! cover fraction, the C3/C4 mixture and the soil-water bucket.
//!
//! - Solar position and the interval-mean cos Z: NOAA solar equations ([`crate::canopy::solar`]).
//! - Diffuse fraction from the clearness index: Erbs et al. (1982).
//! - Each pathway is its own canopy on its cover fraction; ground-area fluxes are cover × canopy.
//! - Ecosystem Δ = Σ GPPₚ·Δₚ / Σ GPPₚ over pathways: weighted by each pathway's assimilation, not
//!   by cover. The C4 share is GPP_C4/GPP.
//! - Soil water: a bucket fed by precipitation and drained by transpiration (from canopy gs and
//!   VPD) and soil evaporation (Priestley & Taylor 1972 under the canopy); β from its relative
//!   available water — or β from an observed soil-water content.
//! - Net radiation for soil evaporation is approximated as 0.7 × shortwave by day (common practice,
//!   from memory; no longwave data are required).
//! - LAI: a constant, the forcing's column, or the Growing Season Index phenology
//!   ([`crate::phenology`], Jolly, Nemani & Running 2005).
//! - Cold: photosynthetic capacity × f_cold, the GSI's minimum-temperature ramp on the lowest air
//!   temperature of the last 24 h; no photosynthesis while the soil is frozen
//!   ([`crate::phenology`]). With f_cold = 0 the leaves are not solved, so any air temperature the
//!   weather holds is accepted; otherwise the leaf temperature is the air temperature (> −2 °C).
//! - With wind, the leaf boundary-layer conductance to H2O is gb = 1.4 × 0.147·√(u/d) mol m⁻² s⁻¹
//!   for leaf width d, 1.4 the outdoor enhancement (Campbell & Norman 1998, from memory).

use crate::canopy::assimilation::{
    CanopyDrivers, CanopyFlux, CanopyLight, CanopySettings, canopy_step_in,
};
use crate::canopy::radiation::diffuse_fraction_erbs;
use crate::canopy::solar::Location;
use crate::error::{Result, check_input, check_range};
use crate::isotopes::product_delta_permil;
use crate::leaf::stomata::boundary_layer_h2o_from_wind;
use crate::leaf::{LeafConditions, LeafModel, LeafOptions, Pathway, SharedTemperature};
use crate::phenology::{ColdState, Phenology, PhenologySettings};
use crate::water::bucket::{Bucket, BucketParams};
use crate::water::evaporation::{PriestleyTaylor, soil_evaporation_demand_mm, transpiration_mm};

/// Fraction of shortwave taken as net radiation by day (common practice, from memory).
pub const NET_RADIATION_PER_SW: f64 = 0.7;

/// One pathway's vegetation at a site.
#[derive(Debug, Clone, PartialEq)]
pub struct Vegetation {
    /// The leaf model with its parameters.
    pub leaf: LeafModel,
    /// Leaf model choices.
    pub options: LeafOptions,
    /// Canopy settings.
    pub canopy: CanopySettings,
    /// Fraction of the ground this pathway covers ((0, 1]).
    pub cover: f64,
    /// Leaf area index where it grows (m² m⁻²), unless the step gives one.
    pub lai_m2_m2: f64,
    /// Leaf width (m) for the boundary layer when wind is known.
    pub leaf_width_m: f64,
    /// LAI from the Growing Season Index between its lai_min and lai_max (None: `lai_m2_m2` or
    /// the step's LAI).
    pub phenology: Option<PhenologySettings>,
}

impl Vegetation {
    /// The pathway.
    pub fn pathway(&self) -> Pathway {
        self.leaf.pathway()
    }
}

/// Where β comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum SoilWater {
    /// A bucket simulated from precipitation and evaporation.
    Bucket(Bucket),
    /// β from an observed volumetric soil-water content each step, mapped with these parameters.
    Observed(BucketParams),
}

/// Everything a site needs besides its weather.
#[derive(Debug, Clone, PartialEq)]
pub struct SiteSettings {
    /// Where the site is.
    pub location: Location,
    /// One entry per pathway present (at most one C3 and one C4).
    pub vegetation: Vec<Vegetation>,
    /// Soil water.
    pub soil: SoilWater,
    /// Priestley–Taylor for soil evaporation.
    pub priestley_taylor: PriestleyTaylor,
    /// Extinction of net radiation to the soil (per unit LAI).
    pub soil_radiation_extinction: f64,
}

/// The weather and atmosphere of one step, in the project's units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SiteDrivers {
    /// Calendar year (local standard time).
    pub year: i32,
    /// Day of year (1–366).
    pub day_of_year: u32,
    /// Start and end of the step, hours of the local standard day (0–24).
    pub hour_start: f64,
    /// End of the step (hours, > start, ≤ 24).
    pub hour_end: f64,
    /// Air temperature (°C).
    pub t_air_c: f64,
    /// Vapour pressure deficit (kPa).
    pub vpd_kpa: f64,
    /// Incoming shortwave (W m⁻²).
    pub sw_w_m2: f64,
    /// Incoming PPFD (µmol m⁻² s⁻¹).
    pub ppfd_umol_m2_s: f64,
    /// CO2 (µmol mol⁻¹).
    pub co2_umol_mol: f64,
    /// δ13C of CO2 (‰).
    pub d13c_co2_permil: f64,
    /// O2 (mmol mol⁻¹).
    pub o2_mmol_mol: f64,
    /// Air pressure (kPa).
    pub pressure_kpa: f64,
    /// Precipitation over the step (mm).
    pub precip_mm: f64,
    /// Observed volumetric soil water (m³ m⁻³), if any.
    pub swc_m3_m3: Option<f64>,
    /// Leaf area index for every pathway this step (m² m⁻²), if the forcing gives one.
    pub lai_m2_m2: Option<f64>,
    /// Wind speed (m s⁻¹), if known.
    pub wind_m_s: Option<f64>,
    /// Growth temperature (°C): mean air temperature of the preceding 30 days.
    pub t_growth_c: f64,
    /// δ13C of the leaves' respiratory substrate (‰ VPDB; the leaf labile pool), if known.
    pub d13c_leaf_substrate_permil: Option<f64>,
}

/// One pathway's part of a site step, per m² of ground (cover applied).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PathwayStep {
    /// The pathway.
    pub pathway: Pathway,
    /// The canopy's fluxes per m² of ground it covers (cover not applied).
    pub canopy: CanopyFlux,
    /// GPP per m² of site ground (µmol m⁻² s⁻¹): cover × canopy GPP.
    pub gpp_umol_m2_s: f64,
    /// Leaf area index used (m² m⁻²).
    pub lai_m2_m2: f64,
}

/// The pathways of a site step, in the settings' order: at most one C3 and one C4, held in place
/// (no allocation per step); read as a slice.
#[derive(Clone, Copy)]
pub struct PathwaySteps {
    items: [PathwayStep; 2],
    len: usize,
}

impl PathwaySteps {
    fn new() -> Self {
        let none = PathwayStep {
            pathway: Pathway::C3,
            canopy: CanopyFlux::empty(),
            gpp_umol_m2_s: 0.0,
            lai_m2_m2: 0.0,
        };
        Self {
            items: [none; 2],
            len: 0,
        }
    }

    /// Appends a pathway (a site has at most two, one per pathway: [`SiteModel::new`]).
    fn push(&mut self, p: PathwayStep) {
        self.items[self.len] = p;
        self.len += 1;
    }
}

impl std::ops::Deref for PathwaySteps {
    type Target = [PathwayStep];
    fn deref(&self) -> &[PathwayStep] {
        &self.items[..self.len]
    }
}

impl PartialEq for PathwaySteps {
    fn eq(&self, other: &Self) -> bool {
        **self == **other
    }
}

impl std::fmt::Debug for PathwaySteps {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_list().entries(self.iter()).finish()
    }
}

/// The site over one step.
#[derive(Debug, Clone, PartialEq)]
pub struct SiteStep {
    /// Each pathway present, in the order of the settings.
    pub pathways: PathwaySteps,
    /// Site GPP (µmol m⁻² s⁻¹, ground).
    pub gpp_umol_m2_s: f64,
    /// GPP-weighted ecosystem discrimination (‰); NaN when nothing is fixed.
    pub discrimination_permil: f64,
    /// δ13C of the assimilate (‰); NaN when nothing is fixed.
    pub d13c_assimilate_permil: f64,
    /// GPP_C4 / GPP (dimensionless); NaN when GPP is 0.
    pub c4_share: f64,
    /// β used this step (0–1).
    pub beta: f64,
    /// Transpiration over the step (mm).
    pub transpiration_mm: f64,
    /// Soil evaporation over the step (mm).
    pub soil_evaporation_mm: f64,
    /// Bucket water after the step (mm), NaN with observed soil water.
    pub soil_water_mm: f64,
    /// Mean cos Z over the step.
    pub cos_zenith: f64,
    /// Diffuse fraction of shortwave (0–1).
    pub diffuse_fraction: f64,
    /// Factor of the cold rule on photosynthetic capacity (0–1; 0: frost or frozen soil, no
    /// photosynthesis).
    pub cold_factor: f64,
    /// Soil temperature of the cold rule (°C): running mean of air temperature.
    pub t_soil_c: f64,
}

/// The light of one step at a site: the Sun's mean height, the diffuse fraction and, for each
/// vegetation whose leaf area is known before the step (a constant or the weather's column, not
/// the phenology), its canopy's two-leaf light. It follows from the site's location, each
/// canopy's optics and LAI and the step's time and light only, so runs of one site over one
/// weather that differ in nothing else (ensemble members whose parameters leave these alone) can
/// compute it once and share it ([`SiteModel::step_lit`]).
#[derive(Debug, Clone, PartialEq)]
pub struct StepLight {
    location: Location,
    /// (year, day of year, hour start, hour end, shortwave, PPFD) as bits.
    when: (i32, u32, u64, u64, u64, u64),
    cos_zenith: f64,
    diffuse_fraction: f64,
    ppfd: f64,
    /// Per vegetation, in the settings' order (at most one C3 and one C4).
    canopies: [Option<CanopyLight>; 2],
    /// Per vegetation, its leaves' temperature terms at the step's air temperature, pressure,
    /// O2 and growth temperature ([`SiteModel::shared_light`]; None from [`SiteModel::light`]).
    temperatures: [Option<SharedTemperature>; 2],
}

impl StepLight {
    fn when(d: &SiteDrivers) -> (i32, u32, u64, u64, u64, u64) {
        (
            d.year,
            d.day_of_year,
            d.hour_start.to_bits(),
            d.hour_end.to_bits(),
            d.sw_w_m2.to_bits(),
            d.ppfd_umol_m2_s.to_bits(),
        )
    }
}

/// A site being simulated: settings and the soil-water state.
#[derive(Debug, Clone, PartialEq)]
pub struct SiteModel {
    settings: SiteSettings,
    cold: ColdState,
    /// One per vegetation: its phenology state, if LAI follows the GSI.
    phenology: Vec<Option<Phenology>>,
    /// Photoperiod (h) of the day (year, day of year) last asked for.
    photoperiod: Option<((i32, u32), f64)>,
    /// One per vegetation: a working copy of its leaf, given the step's boundary layer and cold
    /// scaling in place ([`LeafModel::adjust_from`]) instead of a fresh copy every step.
    leaves: Vec<LeafModel>,
    /// One per vegetation: a working copy of its leaf for the canopy's leaf classes, each with
    /// its own capacity ([`crate::canopy::assimilation::canopy_step_in`]).
    class_leaves: Vec<LeafModel>,
}

impl SiteModel {
    /// Validates the settings: covers in (0, 1] summing to at most 1, at most one vegetation per
    /// pathway, LAI in [0, 20], leaf width in (0, 1] m.
    pub fn new(settings: SiteSettings) -> Result<Self> {
        let mut total = 0.0;
        for (i, v) in settings.vegetation.iter().enumerate() {
            let name = v.pathway().as_str();
            check_range(&format!("vegetation.{name}.cover"), v.cover, 1e-6, 1.0)?;
            check_range(&format!("vegetation.{name}.lai"), v.lai_m2_m2, 0.0, 20.0)?;
            check_range(
                &format!("vegetation.{name}.leaf_width_m"),
                v.leaf_width_m,
                1e-4,
                1.0,
            )?;
            if settings.vegetation[..i]
                .iter()
                .any(|w| w.pathway() == v.pathway())
            {
                return Err(crate::ModelError::InvalidConfig(format!(
                    "two vegetation blocks for {name}"
                )));
            }
            total += v.cover;
        }
        check_range("sum of vegetation covers", total, 0.0, 1.0 + 1e-9)?;
        check_range(
            "soil_radiation_extinction",
            settings.soil_radiation_extinction,
            0.0,
            2.0,
        )?;
        let phenology = settings
            .vegetation
            .iter()
            .map(|v| {
                v.phenology
                    .map(|p| Phenology::new(p).at_latitude(settings.location.latitude_deg()))
            })
            .collect();
        let leaves: Vec<LeafModel> = settings.vegetation.iter().map(|v| v.leaf.clone()).collect();
        Ok(Self {
            settings,
            cold: ColdState::default(),
            phenology,
            photoperiod: None,
            class_leaves: leaves.clone(),
            leaves,
        })
    }

    /// Sunrise to sunset (hours) of a day at the site; 24 in polar day, 0 in polar night.
    fn photoperiod_h(&mut self, year: i32, day_of_year: u32) -> Result<f64> {
        use crate::canopy::solar::SunTimes;
        let key = (year, day_of_year);
        if let Some((k, h)) = self.photoperiod
            && k == key
        {
            return Ok(h);
        }
        let h = match self.settings.location.sun_times(year, day_of_year)? {
            SunTimes::RiseAndSet {
                sunrise_hour_lst,
                sunset_hour_lst,
            } => (sunset_hour_lst - sunrise_hour_lst).clamp(0.0, 24.0),
            SunTimes::PolarDay => 24.0,
            SunTimes::PolarNight => 0.0,
        };
        self.photoperiod = Some((key, h));
        Ok(h)
    }

    /// The settings.
    pub fn settings(&self) -> &SiteSettings {
        &self.settings
    }

    /// Current β (0–1) before the next step (1 with observed soil water until a step is run).
    pub fn beta(&self) -> f64 {
        match &self.settings.soil {
            SoilWater::Bucket(b) => b.beta(),
            SoilWater::Observed(_) => 1.0,
        }
    }

    /// The light of the step `d` (see [`StepLight`]).
    pub fn light(&self, d: &SiteDrivers) -> Result<StepLight> {
        let loc = &self.settings.location;
        let (cos_zenith, et) = loc.mean_cos_zenith_and_extraterrestrial_w_m2(
            d.year,
            d.day_of_year,
            d.hour_start,
            d.hour_end,
        )?;
        let sw = d.sw_w_m2.max(0.0);
        let diffuse_fraction = if cos_zenith > 0.0 && et > 0.0 {
            diffuse_fraction_erbs(sw, et)?
        } else {
            1.0
        };
        let ppfd = check_input("ppfd_umol_m2_s", d.ppfd_umol_m2_s, 0.0, 5000.0)?;
        let mut canopies = [None; 2];
        for (slot, (v, phen)) in canopies
            .iter_mut()
            .zip(self.settings.vegetation.iter().zip(&self.phenology))
        {
            let lai = match (phen, d.lai_m2_m2) {
                (Some(_), _) => continue,
                (None, Some(l)) => l,
                (None, None) => v.lai_m2_m2,
            };
            // A canopy whose light cannot be had here (out-of-range LAI from the weather) is left
            // to the step, which reports it only if the canopy is run.
            *slot = CanopyLight::new(
                &v.canopy,
                &Self::canopy_drivers(
                    LeafConditions::default(),
                    ppfd,
                    diffuse_fraction,
                    cos_zenith,
                    lai,
                ),
            )
            .ok();
        }
        Ok(StepLight {
            location: *loc,
            when: StepLight::when(d),
            cos_zenith,
            diffuse_fraction,
            ppfd,
            canopies,
            temperatures: [None; 2],
        })
    }

    /// [`SiteModel::light`] together with each vegetation's leaf temperature terms at the step's
    /// air temperature, pressure, O2 and growth temperature (`d.t_growth_c`, as the run will set
    /// it): for runs that share the step (ensemble members, fit evaluations). A run whose leaf or
    /// conditions give other inputs, bit for bit, computes its own terms, so sharing cannot change
    /// a number.
    pub fn shared_light(&self, d: &SiteDrivers) -> Result<StepLight> {
        let mut light = self.light(d)?;
        let base = Self::leaf_base(d, 1.0);
        for (slot, v) in light.temperatures.iter_mut().zip(&self.settings.vegetation) {
            *slot = Some(v.leaf.shared_temperature(&v.options, &base));
        }
        Ok(light)
    }

    /// The conditions of the leaves at the top of each canopy in step `d` with soil-water factor
    /// `beta`, their light aside.
    fn leaf_base(d: &SiteDrivers, beta: f64) -> LeafConditions {
        LeafConditions {
            // Used only with cold.factor > 0, which implies air above −2 °C; the clamp keeps a
            // leaf solve inside its valid range whatever the weather.
            t_leaf_c: d.t_air_c.clamp(-30.0, 60.0),
            ppfd_umol_m2_s: 0.0,
            vpd_kpa: d.vpd_kpa,
            ca_umol_mol: d.co2_umol_mol,
            pressure_kpa: d.pressure_kpa,
            o2_mmol_mol: d.o2_mmol_mol,
            d13c_air_permil: d.d13c_co2_permil,
            soil_beta: beta,
            t_growth_c: d.t_growth_c,
            d13c_substrate_permil: d.d13c_leaf_substrate_permil,
        }
    }

    fn canopy_drivers(
        leaf: LeafConditions,
        ppfd: f64,
        diffuse_fraction: f64,
        cos_zenith: f64,
        lai: f64,
    ) -> CanopyDrivers {
        CanopyDrivers {
            leaf,
            ppfd_beam_umol_m2_s: ppfd * (1.0 - diffuse_fraction),
            ppfd_diffuse_umol_m2_s: ppfd * diffuse_fraction,
            cos_zenith,
            lai_m2_m2: lai,
        }
    }

    /// Advances the site by one step.
    pub fn step(&mut self, d: &SiteDrivers) -> Result<SiteStep> {
        let light = self.light(d)?;
        self.step_with(d, &light)
    }

    /// [`SiteModel::step`] with the step's light computed beforehand, e.g. once for many runs of
    /// the site: a light that was not computed for this site's location and this step is
    /// computed afresh, and so is a canopy's whose settings or LAI differ, so the result is the
    /// same as [`SiteModel::step`]'s either way.
    pub fn step_lit(&mut self, d: &SiteDrivers, light: &StepLight) -> Result<SiteStep> {
        if light.location == self.settings.location && light.when == StepLight::when(d) {
            self.step_with(d, light)
        } else {
            self.step(d)
        }
    }

    fn step_with(&mut self, d: &SiteDrivers, light: &StepLight) -> Result<SiteStep> {
        let step_s = (d.hour_end - d.hour_start) * 3600.0;
        let (cos_zenith, diffuse_fraction, ppfd) =
            (light.cos_zenith, light.diffuse_fraction, light.ppfd);
        let sw = d.sw_w_m2.max(0.0);
        let beta = match &self.settings.soil {
            SoilWater::Bucket(b) => b.beta(),
            SoilWater::Observed(p) => match d.swc_m3_m3 {
                Some(theta) if theta.is_finite() => p.beta_from_volumetric(theta)?,
                _ => 1.0,
            },
        };
        let cold = self.cold.step(d.t_air_c, d.hour_end - d.hour_start);
        let photoperiod_h = if self.phenology.iter().any(Option::is_some) {
            self.photoperiod_h(d.year, d.day_of_year)?
        } else {
            f64::NAN
        };
        let leaf_base = Self::leaf_base(d, beta);
        let mut pathways = PathwaySteps::new();
        let (mut gpp, mut gpp_c4, mut wd) = (0.0, 0.0, 0.0);
        let mut transpiration = 0.0;
        let mut lai_total = 0.0;
        for (((((v, phen), lit), temperature), work), class_leaf) in self
            .settings
            .vegetation
            .iter()
            .zip(&mut self.phenology)
            .zip(&light.canopies)
            .zip(&light.temperatures)
            .zip(&mut self.leaves)
            .zip(&mut self.class_leaves)
        {
            let lai = match (phen, d.lai_m2_m2) {
                (Some(p), _) => p.step(
                    (d.year, d.day_of_year),
                    d.t_air_c,
                    d.vpd_kpa,
                    beta,
                    photoperiod_h,
                ),
                (None, Some(l)) => l,
                (None, None) => v.lai_m2_m2,
            };
            // The leaf with the wind's boundary layer and the cold rule's capacity, as
            // `with_boundary_layer` and `with_capacity_scaled` would give it.
            let gb = match d.wind_m_s {
                Some(u) if u.is_finite() => Some(boundary_layer_h2o_from_wind(u, v.leaf_width_m)),
                _ => None,
            };
            let factor = (cold.factor < 1.0).then_some(cold.factor);
            let leaf = if gb.is_none() && factor.is_none() {
                &v.leaf
            } else {
                work.adjust_from(&v.leaf, gb, factor)?;
                &*work
            };
            let flux = if cold.factor > 0.0 {
                canopy_step_in(
                    leaf,
                    class_leaf,
                    &v.options,
                    &v.canopy,
                    &Self::canopy_drivers(leaf_base, ppfd, diffuse_fraction, cos_zenith, lai),
                    lit.as_ref(),
                    temperature.as_ref(),
                )?
            } else {
                CanopyFlux::empty()
            };
            let g = v.cover * flux.gpp_umol_m2_s;
            gpp += g;
            if v.pathway() == Pathway::C4 {
                gpp_c4 += g;
            }
            if g > 0.0 {
                wd += g * flux.discrimination_permil;
            }
            transpiration += v.cover
                * transpiration_mm(
                    flux.gs_canopy_mol_m2_s,
                    d.vpd_kpa,
                    d.pressure_kpa,
                    1.0,
                    step_s,
                )?;
            lai_total += v.cover * lai;
            pathways.push(PathwayStep {
                pathway: v.pathway(),
                canopy: flux,
                gpp_umol_m2_s: g,
                lai_m2_m2: lai,
            });
        }
        let discrimination = if gpp > 0.0 { wd / gpp } else { f64::NAN };
        let pe = self.settings.priestley_taylor.potential_evaporation_mm(
            d.t_air_c,
            d.pressure_kpa,
            NET_RADIATION_PER_SW * sw,
            None,
            step_s,
        )?;
        let soil_demand =
            soil_evaporation_demand_mm(pe, lai_total, self.settings.soil_radiation_extinction)?;
        let (transpiration_mm, soil_evaporation_mm, soil_water_mm) = match &mut self.settings.soil {
            SoilWater::Bucket(b) => {
                let s = b.step(d.precip_mm.max(0.0), transpiration, soil_demand)?;
                (s.transpiration_mm, s.soil_evaporation_mm, s.water_mm)
            }
            SoilWater::Observed(_) => (transpiration, soil_demand, f64::NAN),
        };
        Ok(SiteStep {
            pathways,
            gpp_umol_m2_s: gpp,
            discrimination_permil: discrimination,
            d13c_assimilate_permil: product_delta_permil(d.d13c_co2_permil, discrimination),
            c4_share: if gpp > 0.0 { gpp_c4 / gpp } else { f64::NAN },
            beta,
            transpiration_mm,
            soil_evaporation_mm,
            soil_water_mm,
            cos_zenith,
            diffuse_fraction,
            cold_factor: cold.factor,
            t_soil_c: cold.t_soil_c,
        })
    }
}
