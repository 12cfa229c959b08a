//! Canopy: solar geometry, diffuse fraction, sunlit/shaded radiation and canopy assimilation.

pub mod assimilation;
pub mod radiation;
pub mod solar;
