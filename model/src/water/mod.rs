//! Soil and atmospheric water: vapour pressure (FAO-56), evaporation and the soil-water bucket.

pub mod bucket;
pub mod evaporation;
pub mod vapour;

pub use bucket::{Bucket, BucketParams, BucketStep, InitialWater};
pub use evaporation::{
    LATENT_HEAT_J_KG, PriestleyTaylor, WATER_MOLAR_MASS_G_MOL, soil_evaporation_demand_mm,
    transpiration_mm,
};
pub use vapour::{
    pressure_from_elevation_kpa, psychrometric_constant_kpa_per_c, saturation_slope_kpa_per_c,
    saturation_vapour_pressure_kpa, vpd_from_dew_point_kpa, vpd_from_rh_kpa,
};
