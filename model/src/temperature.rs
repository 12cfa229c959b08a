//! Temperature responses of rates and constants.
//!
//! - Arrhenius normalised to 25 °C: k(T) = k25·exp(Ea(Tk − 298.15)/(R·298.15·Tk)), the form used with
//!   the Bernacchi et al. (2001, Plant Cell Environ.) activation energies.
//! - Peaked Arrhenius (Medlyn et al. 2002, Plant Cell Environ.), exactly 1 at 25 °C:
//!   f(T) = exp(Ha(Tk − 298.15)/(R·298.15·Tk))·(1 + exp((298.15ΔS − Hd)/(R·298.15)))
//!   / (1 + exp((Tk·ΔS − Hd)/(R·Tk))), with optimum Topt = Hd/(ΔS − R·ln(Ha/(Hd − Ha))).
//! - Q10: f(T) = Q10^((T − Tref)/10).

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
