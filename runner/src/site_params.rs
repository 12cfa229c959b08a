//! Parameters of a loaded site by their dotted path in the site file, for ensembles and batch
//! overrides: `vegetation.c3.g1`, `vegetation.c4.cover`, `pools.soil.turnover_years`, `pools.cue`,
//! `site.latitude`, `atmosphere.co2`, ... Every change is validated at once by the constructor that
//! owns the value, so a member whose draw is out of range fails here, with the path in the message.

use isodisc_model::canopy::solar::Location;
use isodisc_model::error::closest_name;
use isodisc_model::leaf::Pathway;
use isodisc_model::phenology::PhenologySettings;
use isodisc_model::pools::network::{DAYS_PER_YEAR, DEFAULT_CUE};
use isodisc_model::pools::{PoolNetwork, PoolsConfig};
use isodisc_model::site::SiteModel;

use crate::error::{Error, Result};
use crate::site::Site;

/// Paths outside `vegetation.<pathway>.*` and `pools.*`, with their units.
const SITE_PATHS: [(&str, &str); 4] = [
    ("site.latitude", "degrees north"),
    ("site.longitude", "degrees east"),
    ("atmosphere.co2", "umol mol-1"),
    ("atmosphere.d13c_co2", "permil VPDB"),
];

impl Site {
    /// Sets the parameter at `path` (units those of the site file: leaf parameters as in
    /// `isodisc leaf --list-params`, `cover` as a fraction, `lai` in m² m⁻², pool turnovers in days
    /// or years, `site.latitude`/`site.longitude` in degrees, `atmosphere.co2` in µmol mol⁻¹,
    /// `atmosphere.d13c_co2` in ‰ VPDB). Errors name the path and the valid range, or suggest the
    /// closest known path; the site is left unchanged on error.
    pub fn set_param(&mut self, path: &str, value: f64) -> Result<()> {
        let fail = |e: &dyn std::fmt::Display| Error::msg(format!("parameter `{path}`: {e}"));
        if let Some(rest) = path.strip_prefix("pools.") {
            let mut pools = self.pools.clone();
            pools.set_param(rest, value).map_err(|e| fail(&e))?;
            pools.build().map_err(|e| fail(&e))?;
            self.pools = pools;
            return Ok(());
        }
        if let Some(rest) = path.strip_prefix("vegetation.") {
            let (pathway, name) = rest.split_once('.').unwrap_or((rest, ""));
            let pathway = match pathway {
                "c3" => Pathway::C3,
                "c4" => Pathway::C4,
                _ => return Err(fail(&"use vegetation.c3.<name> or vegetation.c4.<name>")),
            };
            let mut settings = self.settings.clone();
            let Some(veg) = settings
                .vegetation
                .iter_mut()
                .find(|v| v.pathway() == pathway)
            else {
                return Err(fail(&format!(
                    "the site has no {} vegetation",
                    pathway.as_str()
                )));
            };
            match name {
                "cover" => veg.cover = value,
                "lai" if self.lai_from_forcing => {
                    return Err(fail(&"LAI comes from the weather file at this site"));
                }
                "lai" if veg.phenology.is_some() => {
                    return Err(fail(
                        &"LAI follows the phenology at this site: set lai_min or lai_max",
                    ));
                }
                "lai" => veg.lai_m2_m2 = value,
                "lai_min" | "lai_max" => {
                    let Some(p) = veg.phenology else {
                        return Err(fail(
                            &"lai_min and lai_max apply only with lai = \"phenology\"",
                        ));
                    };
                    let (lo, hi) = if name == "lai_min" {
                        (value, p.lai_max_m2_m2())
                    } else {
                        (p.lai_min_m2_m2(), value)
                    };
                    veg.phenology =
                        Some(PhenologySettings::new(p.kind(), lo, hi).map_err(|e| fail(&e))?);
                    veg.lai_m2_m2 = hi;
                }
                _ => veg.leaf.set(name, value).map_err(|e| fail(&e))?,
            }
            self.settings = SiteModel::new(settings)
                .map_err(|e| fail(&e))?
                .settings()
                .clone();
            return Ok(());
        }
        match path {
            "site.latitude" | "site.longitude" => {
                let loc = &self.settings.location;
                let (lat, lon) = if path == "site.latitude" {
                    (value, loc.longitude_deg())
                } else {
                    (loc.latitude_deg(), value)
                };
                self.settings.location =
                    Location::new(lat, lon, loc.utc_offset_h()).map_err(|e| fail(&e))?;
                self.file.site.latitude = lat;
                self.file.site.longitude = lon;
            }
            "atmosphere.co2" => {
                isodisc_model::error::check_range("co2", value, 1.0, 5000.0)
                    .map_err(|e| fail(&e))?;
                self.co2 = Some(value);
            }
            "atmosphere.d13c_co2" => {
                isodisc_model::error::check_range("d13c_co2", value, -50.0, 50.0)
                    .map_err(|e| fail(&e))?;
                self.d13c_co2 = Some(value);
            }
            _ => {
                let known = SITE_PATHS.iter().map(|p| p.0).chain([
                    "vegetation.c3.g1",
                    "vegetation.c4.cover",
                    "pools.cue",
                ]);
                let hint = closest_name(path, known)
                    .map(|k| format!(" (did you mean `{k}`?)"))
                    .unwrap_or_default();
                return Err(Error::msg(format!(
                    "unknown parameter `{path}`{hint}; known: site.latitude, site.longitude, \
                     atmosphere.co2, atmosphere.d13c_co2, vegetation.<c3|c4>.<cover|lai|lai_min|\
                     lai_max|leaf parameter>, pools.<path>"
                )));
            }
        }
        Ok(())
    }

    /// Sets several parameters as one change. `pools.cue` goes first (setting a pool parameter
    /// writes the default network out with the current CUE); a value refused only because of
    /// another not yet set (two covers whose sum passes 1 in between) is retried after the rest.
    /// On error the first refusal is returned and the site may hold part of the change.
    pub fn set_params(&mut self, values: &[(&str, f64)]) -> Result<()> {
        let mut pending: Vec<(&str, f64)> = values.to_vec();
        pending.sort_by_key(|(p, _)| *p != "pools.cue");
        loop {
            let before = pending.len();
            let mut first_error = None;
            pending.retain(|(p, v)| match self.set_param(p, *v) {
                Ok(()) => false,
                Err(e) => {
                    first_error.get_or_insert(e);
                    true
                }
            });
            match first_error {
                None => return Ok(()),
                Some(e) if pending.len() == before => return Err(e),
                Some(_) => {}
            }
        }
    }

    /// The current value of the parameter at `path` (units as in [`Site::set_param`]), or None
    /// when the path is unknown or the value comes from the weather file.
    pub fn param_value(&self, path: &str) -> Option<f64> {
        if let Some(rest) = path.strip_prefix("pools.") {
            return pool_value(&self.pools, rest);
        }
        if let Some(rest) = path.strip_prefix("vegetation.") {
            let (pathway, name) = rest.split_once('.')?;
            let veg = self
                .settings
                .vegetation
                .iter()
                .find(|v| v.pathway().as_str() == pathway)?;
            return match name {
                "cover" => Some(veg.cover),
                "lai" if self.lai_from_forcing || veg.phenology.is_some() => None,
                "lai" => Some(veg.lai_m2_m2),
                "lai_min" => veg.phenology.map(|p| p.lai_min_m2_m2()),
                "lai_max" => veg.phenology.map(|p| p.lai_max_m2_m2()),
                _ => veg.leaf.get(name),
            };
        }
        match path {
            "site.latitude" => Some(self.settings.location.latitude_deg()),
            "site.longitude" => Some(self.settings.location.longitude_deg()),
            "atmosphere.co2" => self.co2,
            "atmosphere.d13c_co2" => self.d13c_co2,
            _ => None,
        }
    }
}

/// A `[pools]` value by the paths of `PoolsConfig::set_param`.
fn pool_value(pools: &PoolsConfig, path: &str) -> Option<f64> {
    match path {
        "rtol" => return Some(pools.rtol),
        "atol" => return Some(pools.atol),
        "q10" => return Some(pools.q10),
        "t_ref_c" => return Some(pools.t_ref_c),
        "moisture_min" => return Some(pools.moisture_min),
        "r_vpdb" => return Some(pools.r_vpdb),
        "cue" => {
            return match pools.pool {
                None => Some(pools.cue.unwrap_or(DEFAULT_CUE)),
                Some(_) => None,
            };
        }
        _ => {}
    }
    let (pool, param) = path.split_once('.')?;
    if let Some(entries) = &pools.pool {
        let e = entries.iter().find(|e| e.name == pool)?;
        let days = e
            .turnover_days
            .or(e.turnover_years.map(|y| y * DAYS_PER_YEAR));
        return match param {
            "turnover_days" => days,
            "turnover_years" => days.map(|d| d / DAYS_PER_YEAR),
            "respired_fraction" => Some(e.respired_fraction),
            "assimilation_share" => Some(e.assimilation_share),
            "epsilon_respiration_permil" => Some(e.epsilon_respiration_permil),
            "epsilon_transfer_permil" => Some(e.epsilon_transfer_permil),
            other => other
                .strip_prefix("transfers.")
                .and_then(|t| e.transfers.get(t).copied()),
        };
    }
    let net = PoolNetwork::default_four_pool_with_cue(pools.cue.unwrap_or(DEFAULT_CUE)).ok()?;
    let s = net.pools().iter().find(|p| p.name == pool)?;
    match param {
        "turnover_days" => Some(s.turnover_days),
        "turnover_years" => Some(s.turnover_days / DAYS_PER_YEAR),
        "respired_fraction" => Some(s.respired_fraction),
        "assimilation_share" => Some(s.assimilation_share),
        "epsilon_respiration_permil" => Some(s.epsilon_respiration_permil),
        "epsilon_transfer_permil" => Some(s.epsilon_transfer_permil),
        other => {
            let t = other.strip_prefix("transfers.")?;
            s.transfers.iter().find(|(n, _)| n == t).map(|(_, f)| *f)
        }
    }
}
