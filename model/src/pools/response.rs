//! Response of heterotrophic turnover to soil temperature and moisture.
//!
//! Temperature: a Q10 response, f = Q10^((T − T_ref)/10), or Lloyd & Taylor (1994, Functional
//! Ecology), f = exp(308.56 K · (1/(T_ref + 46.02) − 1/(T + 46.02))) with T in °C, i.e. their
//! E0 = 308.56 K and T0 = 227.13 K, normalised so that f(T_ref) = 1. Moisture: the caller passes
//! a factor β in [0, 1] (e.g. the soil-water stress factor) and the rate is scaled by
//! m_min + (1 − m_min)·β, so dry soil slows but never stops decomposition (common practice).

use crate::error::{Result, check_input, check_range};

/// Lloyd & Taylor (1994) activation-like parameter E0, K.
pub const LLOYD_TAYLOR_E0_K: f64 = 308.56;
/// Lloyd & Taylor (1994) T0 expressed as an offset from °C: T + 46.02 = T_K − 227.13, K.
pub const LLOYD_TAYLOR_OFFSET_C: f64 = 46.02;

/// Soil temperatures accepted as inputs, °C (Lloyd & Taylor diverges at −46.02 °C).
pub const T_SOIL_RANGE_C: (f64, f64) = (-40.0, 60.0);

/// How heterotrophic turnover depends on soil temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TemperatureResponse {
    /// f = q10^((T − t_ref_c)/10); `q10` dimensionless in [1, 10], `t_ref_c` in °C.
    Q10 {
        /// Rate multiplier per 10 °C warming, dimensionless.
        q10: f64,
        /// Temperature at which f = 1, °C.
        t_ref_c: f64,
    },
    /// Lloyd & Taylor (1994), normalised to f = 1 at `t_ref_c` (°C).
    LloydTaylor {
        /// Temperature at which f = 1, °C.
        t_ref_c: f64,
    },
}

/// Default Q10, dimensionless (a common choice; from memory).
pub const DEFAULT_Q10: f64 = 2.0;
/// Default reference temperature of the responses, °C (Lloyd & Taylor's own reference is 10 °C).
pub const DEFAULT_T_REF_C: f64 = 10.0;
/// Default floor of the moisture factor, dimensionless (common practice; an assumption).
pub const DEFAULT_MOISTURE_MIN: f64 = 0.1;

impl Default for TemperatureResponse {
    /// Q10 = 2 referenced to 10 °C.
    fn default() -> Self {
        TemperatureResponse::Q10 {
            q10: DEFAULT_Q10,
            t_ref_c: DEFAULT_T_REF_C,
        }
    }
}

/// The validated environmental response of the responsive pools.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EnvironmentResponse {
    temperature: TemperatureResponse,
    moisture_min: f64,
}

impl Default for EnvironmentResponse {
    /// Q10 = 2 at 10 °C, moisture floor 0.1.
    fn default() -> Self {
        EnvironmentResponse {
            temperature: TemperatureResponse::default(),
            moisture_min: DEFAULT_MOISTURE_MIN,
        }
    }
}

impl EnvironmentResponse {
    /// Validates the settings: `q10` in [1, 10], `t_ref_c` in [−20, 40] °C, `moisture_min` in
    /// [0, 1] (dimensionless).
    pub fn new(temperature: TemperatureResponse, moisture_min: f64) -> Result<Self> {
        match temperature {
            TemperatureResponse::Q10 { q10, t_ref_c } => {
                check_range("q10", q10, 1.0, 10.0)?;
                check_range("t_ref_c", t_ref_c, -20.0, 40.0)?;
            }
            TemperatureResponse::LloydTaylor { t_ref_c } => {
                check_range("t_ref_c", t_ref_c, -20.0, 40.0)?;
            }
        }
        check_range("moisture_min", moisture_min, 0.0, 1.0)?;
        Ok(EnvironmentResponse {
            temperature,
            moisture_min,
        })
    }

    /// The temperature response.
    pub fn temperature(&self) -> TemperatureResponse {
        self.temperature
    }

    /// Floor of the moisture factor, dimensionless.
    pub fn moisture_min(&self) -> f64 {
        self.moisture_min
    }

    /// Temperature factor at soil temperature `t_soil_c` (°C, in [−40, 60]); 1 at the reference.
    pub fn temperature_factor(&self, t_soil_c: f64) -> Result<f64> {
        let t = check_input("t_soil_c", t_soil_c, T_SOIL_RANGE_C.0, T_SOIL_RANGE_C.1)?;
        Ok(match self.temperature {
            TemperatureResponse::Q10 { q10, t_ref_c } => q10.powf((t - t_ref_c) / 10.0),
            TemperatureResponse::LloydTaylor { t_ref_c } => (LLOYD_TAYLOR_E0_K
                * (1.0 / (t_ref_c + LLOYD_TAYLOR_OFFSET_C) - 1.0 / (t + LLOYD_TAYLOR_OFFSET_C)))
                .exp(),
        })
    }

    /// Moisture factor m_min + (1 − m_min)·β for a caller's moisture index `moisture` (β, in
    /// [0, 1], dimensionless).
    pub fn moisture_factor(&self, moisture: f64) -> Result<f64> {
        let b = check_input("moisture", moisture, 0.0, 1.0)?;
        Ok(self.moisture_min + (1.0 - self.moisture_min) * b)
    }

    /// Product of the temperature and moisture factors: the multiplier of the turnover rates of
    /// responsive pools, dimensionless.
    pub fn factor(&self, t_soil_c: f64, moisture: f64) -> Result<f64> {
        Ok(self.temperature_factor(t_soil_c)? * self.moisture_factor(moisture)?)
    }
}
