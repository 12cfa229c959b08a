//! Soil and atmospheric water: vapour pressure (FAO-56), evaporation and the soil-water bucket.

pub mod vapour;

pub use vapour::{
    pressure_from_elevation_kpa, psychrometric_constant_kpa_per_c, saturation_slope_kpa_per_c,
    saturation_vapour_pressure_kpa, vpd_from_dew_point_kpa, vpd_from_rh_kpa,
};
