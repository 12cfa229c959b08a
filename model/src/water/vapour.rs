//! Vapour pressure, psychrometric constant and air pressure, as given in FAO-56
//! (Allen, Pereira, Raes & Smith 1998, FAO Irrigation and Drainage Paper 56, eqs. 7, 8, 11, 12, 13).

/// Saturation vapour pressure over water (kPa) at `t_c` (°C): es = 0.6108·exp(17.27T/(T + 237.3)).
pub fn saturation_vapour_pressure_kpa(t_c: f64) -> f64 {
    0.6108 * (17.27 * t_c / (t_c + 237.3)).exp()
}

/// Slope of the saturation vapour pressure curve (kPa °C⁻¹) at `t_c` (°C): 4098·es/(T + 237.3)².
pub fn saturation_slope_kpa_per_c(t_c: f64) -> f64 {
    4098.0 * saturation_vapour_pressure_kpa(t_c) / (t_c + 237.3).powi(2)
}

/// Atmospheric pressure (kPa) at `elevation_m` above sea level: 101.3·((293 − 0.0065z)/293)^5.26.
pub fn pressure_from_elevation_kpa(elevation_m: f64) -> f64 {
    101.3 * ((293.0 - 0.0065 * elevation_m) / 293.0).powf(5.26)
}

/// Psychrometric constant (kPa °C⁻¹) at `pressure_kpa`: γ = 0.665e-3·P.
pub fn psychrometric_constant_kpa_per_c(pressure_kpa: f64) -> f64 {
    0.665e-3 * pressure_kpa
}

/// Vapour pressure deficit (kPa) from air temperature (°C) and relative humidity (%).
/// RH above 100 % (sensor overshoot) gives a VPD of 0, never a negative one.
pub fn vpd_from_rh_kpa(t_c: f64, rh_percent: f64) -> f64 {
    (saturation_vapour_pressure_kpa(t_c) * (1.0 - rh_percent / 100.0)).max(0.0)
}

/// Vapour pressure deficit (kPa) from air temperature and dew point (both °C).
pub fn vpd_from_dew_point_kpa(t_c: f64, dew_point_c: f64) -> f64 {
    (saturation_vapour_pressure_kpa(t_c) - saturation_vapour_pressure_kpa(dew_point_c)).max(0.0)
}
