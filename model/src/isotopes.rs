//! Isotope arithmetic for carbon in CO2.
//!
//! - δ13C = (R/R_VPDB − 1)·1000 (‰ vs VPDB).
//! - Discrimination of a product p against its source a:
//!   Δ = (δa − δp)/(1 + δp/1000) (Farquhar, Ehleringer & Hubick 1989, Annu. Rev. Plant Physiol.),
//!   positive when the product is depleted; its inverse δp = (δa − Δ)/(1 + Δ/1000).
//! - 13CO2 in CO2 of total mole fraction c: c13 = c·R/(1 + R) (oxygen isotopologues ignored).
//!
//! The VPDB ratio matters only for absolute ratios and 13CO2 amounts; Δ computed from δ values does
//! not depend on it.

use crate::error::{Result, check_range};

/// 13C/12C of VPDB after Werner & Brand (2001, Rapid Commun. Mass Spectrom.): the default.
pub const R_VPDB_WERNER_BRAND_2001: f64 = 0.011_180_2;
/// 13C/12C of PDB after Craig (1957), still common in older work.
pub const R_VPDB_CRAIG_1957: f64 = 0.011_237_2;

/// The 13C/12C ratio of the VPDB standard in use. Validated: within 0.010–0.012.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VpdbRatio(f64);

impl VpdbRatio {
    /// A VPDB ratio (dimensionless 13C/12C), rejected outside 0.010–0.012 or when NaN.
    pub fn new(r_vpdb: f64) -> Result<Self> {
        check_range("r_vpdb", r_vpdb, 0.010, 0.012).map(Self)
    }

    /// The ratio (13C/12C, dimensionless).
    pub fn value(self) -> f64 {
        self.0
    }

    /// 13C/12C ratio of a sample with the given δ13C (‰ vs VPDB).
    pub fn ratio_from_delta(self, d13c_permil: f64) -> f64 {
        ratio_from_delta(d13c_permil, self.0)
    }

    /// δ13C (‰ vs VPDB) of a sample with the given 13C/12C ratio.
    pub fn delta_from_ratio(self, ratio: f64) -> f64 {
        delta_from_ratio(ratio, self.0)
    }

    /// Split a CO2 mole fraction (µmol mol⁻¹) of the given δ13C (‰) into (12CO2, 13CO2), µmol mol⁻¹.
    pub fn split_co2(self, co2_umol_mol: f64, d13c_permil: f64) -> (f64, f64) {
        split_isotopes(co2_umol_mol, d13c_permil, self.0)
    }
}

impl Default for VpdbRatio {
    fn default() -> Self {
        Self(R_VPDB_WERNER_BRAND_2001)
    }
}

/// 13C/12C ratio of δ13C `d13c_permil` (‰) against a standard of ratio `r_standard`.
pub fn ratio_from_delta(d13c_permil: f64, r_standard: f64) -> f64 {
    r_standard * (1.0 + d13c_permil / 1000.0)
}

/// δ13C (‰) of a 13C/12C ratio against a standard of ratio `r_standard`.
pub fn delta_from_ratio(ratio: f64, r_standard: f64) -> f64 {
    (ratio / r_standard - 1.0) * 1000.0
}

/// Splits a total amount (any unit: µmol mol⁻¹ of CO2, gC m⁻²) of δ13C `d13c_permil` (‰) into its
/// (12C, 13C) parts: 13C = total·R/(1 + R).
pub fn split_isotopes(total: f64, d13c_permil: f64, r_standard: f64) -> (f64, f64) {
    let r = ratio_from_delta(d13c_permil, r_standard);
    let c13 = total * r / (1.0 + r);
    (total - c13, c13)
}

/// Discrimination Δ (‰) of a product with δ13C `d13c_product_permil` against its source with
/// `d13c_source_permil` (both ‰ vs VPDB): Δ = (δa − δp)/(1 + δp/1000).
pub fn discrimination_permil(d13c_source_permil: f64, d13c_product_permil: f64) -> f64 {
    (d13c_source_permil - d13c_product_permil) / (1.0 + d13c_product_permil / 1000.0)
}

/// δ13C (‰) of a product formed with discrimination `discrimination_permil` (‰) from a source of
/// δ13C `d13c_source_permil` (‰): δp = (δa − Δ)/(1 + Δ/1000).
pub fn product_delta_permil(d13c_source_permil: f64, discrimination_permil: f64) -> f64 {
    (d13c_source_permil - discrimination_permil) / (1.0 + discrimination_permil / 1000.0)
}
