//! Temperature responses of rates and constants.
//!
//! - Arrhenius normalised to 25 °C: k(T) = k25·exp(Ea(Tk − 298.15)/(R·298.15·Tk)), the form used with
//!   the Bernacchi et al. (2001, Plant Cell Environ.) activation energies.
//! - Peaked Arrhenius (Medlyn et al. 2002, Plant Cell Environ.), exactly 1 at 25 °C:
//!   f(T) = exp(Ha(Tk − 298.15)/(R·298.15·Tk))·(1 + exp((298.15ΔS − Hd)/(R·298.15)))
//!   / (1 + exp((Tk·ΔS − Hd)/(R·Tk))), with optimum Topt = Hd/(ΔS − R·ln(Ha/(Hd − Ha))).
//! - Q10: f(T) = Q10^((T − Tref)/10).
//! - Thermal acclimation of Vcmax and Jmax (Kattge & Knorr 2007, Plant Cell Environ.; constants
//!   from memory): peaked Arrhenius with Hd = 200 kJ mol⁻¹, Ha = 71.513 (Vcmax) and 49.884 kJ mol⁻¹
//!   (Jmax), and entropy terms that fall with the growth temperature Tg (°C):
//!   ΔS_V = 668.39 − 1.07·Tg, ΔS_J = 659.70 − 0.75·Tg J mol⁻¹ K⁻¹; the ratio Jmax25/Vcmax25 =
//!   2.59 − 0.035·Tg. Tg is held within 11–35 °C, about the range of growth temperatures of their
//!   data (from memory), so the fits are not extrapolated.
//! - Growth temperature in site runs: the mean air temperature of the preceding 30 days
//!   ([`GrowthTemperature`]).

/// Universal gas constant (J mol⁻¹ K⁻¹).
pub const GAS_CONSTANT_J_MOL_K: f64 = 8.314;
/// 0 °C in kelvin.
pub const ZERO_C_IN_K: f64 = 273.15;
/// 25 °C in kelvin, the reference temperature of the normalised forms.
pub const T25_K: f64 = 298.15;

/// Arrhenius factor relative to 25 °C (dimensionless) for activation energy `ea_j_mol` (J mol⁻¹)
/// at `t_c` (°C). Multiply a value at 25 °C by it.
pub fn arrhenius_factor(ea_j_mol: f64, t_c: f64) -> f64 {
    let tk = t_c + ZERO_C_IN_K;
    (ea_j_mol * (tk - T25_K) / (GAS_CONSTANT_J_MOL_K * T25_K * tk)).exp()
}

/// Peaked Arrhenius factor relative to 25 °C (dimensionless; exactly 1 at 25 °C) for activation
/// energy `ha_j_mol`, deactivation energy `hd_j_mol` (J mol⁻¹) and entropy term `ds_j_mol_k`
/// (J mol⁻¹ K⁻¹), at `t_c` (°C).
pub fn peaked_arrhenius_factor(ha_j_mol: f64, hd_j_mol: f64, ds_j_mol_k: f64, t_c: f64) -> f64 {
    let tk = t_c + ZERO_C_IN_K;
    let r = GAS_CONSTANT_J_MOL_K;
    let num = 1.0 + ((T25_K * ds_j_mol_k - hd_j_mol) / (r * T25_K)).exp();
    let den = 1.0 + ((tk * ds_j_mol_k - hd_j_mol) / (r * tk)).exp();
    arrhenius_factor(ha_j_mol, t_c) * num / den
}

/// Temperature (°C) at which the peaked Arrhenius function peaks.
pub fn peaked_arrhenius_optimum_c(ha_j_mol: f64, hd_j_mol: f64, ds_j_mol_k: f64) -> f64 {
    hd_j_mol / (ds_j_mol_k - GAS_CONSTANT_J_MOL_K * (ha_j_mol / (hd_j_mol - ha_j_mol)).ln())
        - ZERO_C_IN_K
}

/// Q10 factor (dimensionless) at `t_c` relative to `t_ref_c` (both °C).
pub fn q10_factor(q10: f64, t_c: f64, t_ref_c: f64) -> f64 {
    q10.powf((t_c - t_ref_c) / 10.0)
}

/// Activation energy of Vcmax in the acclimated set (J mol⁻¹; Kattge & Knorr 2007, from memory).
pub const KK07_HA_VCMAX_J_MOL: f64 = 71_513.0;
/// Activation energy of Jmax in the acclimated set (J mol⁻¹; Kattge & Knorr 2007, from memory).
pub const KK07_HA_JMAX_J_MOL: f64 = 49_884.0;
/// Growth temperatures (°C) within which the acclimation fits are used; outside they are held at
/// the nearer end.
pub const KK07_T_GROWTH_RANGE_C: (f64, f64) = (11.0, 35.0);

fn clamp_growth(t_growth_c: f64) -> f64 {
    t_growth_c.clamp(KK07_T_GROWTH_RANGE_C.0, KK07_T_GROWTH_RANGE_C.1)
}

/// Entropy term of Vcmax (J mol⁻¹ K⁻¹) at growth temperature `t_growth_c` (°C): 668.39 − 1.07·Tg.
pub fn kattge_knorr_ds_vcmax(t_growth_c: f64) -> f64 {
    668.39 - 1.07 * clamp_growth(t_growth_c)
}

/// Entropy term of Jmax (J mol⁻¹ K⁻¹) at growth temperature `t_growth_c` (°C): 659.70 − 0.75·Tg.
pub fn kattge_knorr_ds_jmax(t_growth_c: f64) -> f64 {
    659.70 - 0.75 * clamp_growth(t_growth_c)
}

/// Jmax25/Vcmax25 (dimensionless) at growth temperature `t_growth_c` (°C): 2.59 − 0.035·Tg.
pub fn kattge_knorr_jv_ratio(t_growth_c: f64) -> f64 {
    2.59 - 0.035 * clamp_growth(t_growth_c)
}

/// Days over which the growth temperature is averaged.
pub const GROWTH_TEMPERATURE_DAYS: usize = 30;

/// The growth temperature of a site run: the mean of the daily mean air temperatures of the
/// preceding [`GROWTH_TEMPERATURE_DAYS`] days. Until a first day is complete it is the mean of the
/// steps seen so far.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct GrowthTemperature {
    daily_means: std::collections::VecDeque<f64>,
    sum_of_days: f64,
    day: Option<(i32, u32)>,
    day_sum: f64,
    day_n: u32,
}

impl GrowthTemperature {
    /// An empty record.
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds one step's air temperature `t_air_c` (°C) of day `day` (year, day of year) and returns
    /// the growth temperature (°C) for that step.
    pub fn push(&mut self, day: (i32, u32), t_air_c: f64) -> f64 {
        if self.day != Some(day) {
            if self.day_n > 0 {
                let mean = self.day_sum / f64::from(self.day_n);
                self.daily_means.push_back(mean);
                if self.daily_means.len() > GROWTH_TEMPERATURE_DAYS {
                    self.daily_means.pop_front();
                }
                // Summed afresh once a day: no drift from adding and removing over long runs.
                self.sum_of_days = self.daily_means.iter().sum();
            }
            self.day = Some(day);
            self.day_sum = 0.0;
            self.day_n = 0;
        }
        self.day_sum += t_air_c;
        self.day_n += 1;
        if self.daily_means.is_empty() {
            self.day_sum / f64::from(self.day_n)
        } else {
            self.sum_of_days / self.daily_means.len() as f64
        }
    }
}
