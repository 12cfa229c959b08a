//! Soil-water bucket: plant-available water between the wilting point and field capacity over a
//! root depth, fed by precipitation and drained by transpiration, soil evaporation and overflow.
//!
//! The water-stress factor β follows the shape of FAO-56's water-stress coefficient
//! Ks = (TAW − Dr)/((1 − p)·TAW) (Allen et al. 1998, eq. 84; from memory): zero at the wilting
//! point, rising linearly with relative available water to 1 at a fraction q = 1 − p of the
//! available water, 1 above. The default q = 0.5 (p = 0.5 is FAO-56's common depletion fraction;
//! common practice, from memory).

use crate::error::{ModelError, Result, check_input, check_range};

/// Largest precipitation or demand accepted for one step (mm).
const MAX_STEP_MM: f64 = 2000.0;

/// Soil and root-zone parameters of the bucket, validated once.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BucketParams {
    field_capacity_m3_m3: f64,
    wilting_point_m3_m3: f64,
    root_depth_m: f64,
    beta_threshold: f64,
}

/// How full the bucket starts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum InitialWater {
    /// Fraction of the plant-available capacity ([0, 1]).
    FractionOfCapacity(f64),
    /// Volumetric water content (m³ m⁻³); values outside wilting point–field capacity are clamped.
    Volumetric(f64),
}

/// What one bucket step did (all mm over the step).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BucketStep {
    /// Actual transpiration (mm).
    pub transpiration_mm: f64,
    /// Actual soil evaporation (mm).
    pub soil_evaporation_mm: f64,
    /// Water above capacity lost as runoff and drainage (mm).
    pub overflow_mm: f64,
    /// Plant-available water after the step (mm).
    pub water_mm: f64,
    /// Water-stress factor after the step (dimensionless, [0, 1]).
    pub beta: f64,
}

impl BucketParams {
    /// Field capacity `field_capacity_m3_m3` and wilting point `wilting_point_m3_m3` (m³ m⁻³, both
    /// in (0, 0.7], field capacity above wilting point), root depth `root_depth_m` (m, (0, 10]) and
    /// `beta_threshold` q (fraction of available water at which β reaches 1, (0, 1]).
    pub fn new(
        field_capacity_m3_m3: f64,
        wilting_point_m3_m3: f64,
        root_depth_m: f64,
        beta_threshold: f64,
    ) -> Result<Self> {
        let positive = f64::MIN_POSITIVE;
        let fc = check_range("field_capacity_m3_m3", field_capacity_m3_m3, positive, 0.7)?;
        let wp = check_range("wilting_point_m3_m3", wilting_point_m3_m3, positive, 0.7)?;
        if wp >= fc {
            return Err(ModelError::InvalidParameter {
                name: "wilting_point_m3_m3".into(),
                value: wp,
                min: 0.0,
                max: fc,
            });
        }
        Ok(Self {
            field_capacity_m3_m3: fc,
            wilting_point_m3_m3: wp,
            root_depth_m: check_range("root_depth_m", root_depth_m, positive, 10.0)?,
            beta_threshold: check_range("beta_threshold", beta_threshold, positive, 1.0)?,
        })
    }

    /// Field capacity (m³ m⁻³).
    pub fn field_capacity_m3_m3(&self) -> f64 {
        self.field_capacity_m3_m3
    }

    /// Wilting point (m³ m⁻³).
    pub fn wilting_point_m3_m3(&self) -> f64 {
        self.wilting_point_m3_m3
    }

    /// Root depth (m).
    pub fn root_depth_m(&self) -> f64 {
        self.root_depth_m
    }

    /// β threshold q (fraction of available water).
    pub fn beta_threshold(&self) -> f64 {
        self.beta_threshold
    }

    /// Plant-available water capacity (mm): (θfc − θwp)·depth, 1 m of water being 1000 mm.
    pub fn capacity_mm(&self) -> f64 {
        (self.field_capacity_m3_m3 - self.wilting_point_m3_m3) * self.root_depth_m * 1000.0
    }

    /// β (dimensionless, [0, 1]) from relative available water (dimensionless, clamped to
    /// [0, 1]): min(1, relative/q).
    pub fn beta_from_relative(&self, relative_water: f64) -> f64 {
        (relative_water.clamp(0.0, 1.0) / self.beta_threshold).min(1.0)
    }

    /// Relative available water (dimensionless, [0, 1]) of a volumetric water content
    /// `theta_m3_m3` (m³ m⁻³, [0, 1]): (θ − θwp)/(θfc − θwp), clamped.
    pub fn relative_from_volumetric(&self, theta_m3_m3: f64) -> Result<f64> {
        let theta = check_input("theta_m3_m3", theta_m3_m3, 0.0, 1.0)?;
        Ok(((theta - self.wilting_point_m3_m3)
            / (self.field_capacity_m3_m3 - self.wilting_point_m3_m3))
            .clamp(0.0, 1.0))
    }

    /// β (dimensionless, [0, 1]) from an observed volumetric water content `theta_m3_m3`
    /// (m³ m⁻³), with the same mapping as the bucket.
    pub fn beta_from_volumetric(&self, theta_m3_m3: f64) -> Result<f64> {
        Ok(self.beta_from_relative(self.relative_from_volumetric(theta_m3_m3)?))
    }
}

/// The soil-water bucket: its parameters and its current plant-available water.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bucket {
    params: BucketParams,
    water_mm: f64,
}

impl Bucket {
    /// A bucket with `params`, starting at `initial` water.
    pub fn new(params: BucketParams, initial: InitialWater) -> Result<Self> {
        let relative = match initial {
            InitialWater::FractionOfCapacity(f) => {
                check_range("initial_water_fraction", f, 0.0, 1.0)?
            }
            InitialWater::Volumetric(theta) => params.relative_from_volumetric(theta)?,
        };
        Ok(Self {
            params,
            water_mm: relative * params.capacity_mm(),
        })
    }

    /// The bucket's parameters.
    pub fn params(&self) -> &BucketParams {
        &self.params
    }

    /// Plant-available water (mm).
    pub fn water_mm(&self) -> f64 {
        self.water_mm
    }

    /// Relative available water (dimensionless, [0, 1]).
    pub fn relative_water(&self) -> f64 {
        self.water_mm / self.params.capacity_mm()
    }

    /// Water-stress factor β (dimensionless, [0, 1]).
    pub fn beta(&self) -> f64 {
        self.params.beta_from_relative(self.relative_water())
    }

    /// Advance one step with precipitation `precipitation_mm`, transpiration demand
    /// `transpiration_demand_mm` and soil-evaporation demand `soil_evaporation_demand_mm` (mm over
    /// the step, each ≥ 0).
    ///
    /// Precipitation arrives first and can supply the step's losses. Soil evaporation is its
    /// demand times the relative water after rain; transpiration is its demand. When the two
    /// exceed the water available they are cut in proportion, so the bucket never goes below
    /// empty. Water above capacity afterwards leaves as overflow (runoff and drainage). Balance:
    /// precipitation = Δwater + transpiration + soil evaporation + overflow.
    pub fn step(
        &mut self,
        precipitation_mm: f64,
        transpiration_demand_mm: f64,
        soil_evaporation_demand_mm: f64,
    ) -> Result<BucketStep> {
        let p = check_input("precipitation_mm", precipitation_mm, 0.0, MAX_STEP_MM)?;
        let t_demand = check_input(
            "transpiration_demand_mm",
            transpiration_demand_mm,
            0.0,
            MAX_STEP_MM,
        )?;
        let e_demand = check_input(
            "soil_evaporation_demand_mm",
            soil_evaporation_demand_mm,
            0.0,
            MAX_STEP_MM,
        )?;
        let capacity = self.params.capacity_mm();
        let available = self.water_mm + p;
        let mut soil_evaporation = e_demand * (available / capacity).min(1.0);
        let mut transpiration = t_demand;
        let losses = transpiration + soil_evaporation;
        if losses > available {
            let scale = available / losses;
            transpiration *= scale;
            soil_evaporation *= scale;
        }
        let remaining = (available - transpiration - soil_evaporation).max(0.0);
        let overflow = (remaining - capacity).max(0.0);
        self.water_mm = remaining - overflow;
        Ok(BucketStep {
            transpiration_mm: transpiration,
            soil_evaporation_mm: soil_evaporation,
            overflow_mm: overflow,
            water_mm: self.water_mm,
            beta: self.beta(),
        })
    }
}
