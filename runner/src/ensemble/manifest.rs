//! The batch manifest (TOML): the sites of a batch, each a site file or a row of overrides on a
//! template site file, with an area weight for grid cells. Format in `docs/ensembles.md`:
//!
//! ```toml
//! title = "Demo savanna transect"      # optional; the priors' NetCDF title
//! template = "../site.toml"             # site file the override rows start from
//!
//! [[site]]
//! id = "wet-miombo"                     # unique; letters, digits, '-' and '_'
//! weight = 0.4                          # area weight (>= 0), e.g. grid-cell fraction
//! latitude = -12.0                      # shorthand for set."site.latitude"
//! c4_cover = 0.3                        # shorthand for set."vegetation.c4.cover"
//! forcing = "weather_wet.csv"           # weather file, relative to the manifest
//! set = { "vegetation.c3.g1" = 4.5 }    # any parameter path
//! ```

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Deserialize;
use toml::Spanned;

use super::spec::{line_of, toml_error};
use crate::error::{Error, Result};
use crate::site::Site;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawManifest {
    #[serde(default)]
    title: Option<String>,
    #[serde(default)]
    template: Option<PathBuf>,
    site: Vec<Spanned<RawSite>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSite {
    id: String,
    #[serde(default)]
    file: Option<PathBuf>,
    #[serde(default)]
    weight: Option<f64>,
    #[serde(default)]
    latitude: Option<f64>,
    #[serde(default)]
    longitude: Option<f64>,
    #[serde(default)]
    c4_cover: Option<f64>,
    #[serde(default)]
    forcing: Option<PathBuf>,
    #[serde(default)]
    set: BTreeMap<String, f64>,
}

/// One site of a batch, ready to run.
#[derive(Debug, Clone)]
pub struct ManifestSite {
    /// Unique id; also its folder name under `sites/`.
    pub id: String,
    /// Area weight (dimensionless, ≥ 0; default 1).
    pub weight: f64,
    /// The site with its overrides applied.
    pub site: Site,
    /// Parameter overrides applied, in order (path, value in the parameter's unit).
    pub overrides: Vec<(String, f64)>,
    /// The weather file (absolute when overridden, else the site file's, relative to it).
    pub forcing: PathBuf,
}

impl ManifestSite {
    /// The weather file's path as opened.
    pub fn forcing_path(&self) -> PathBuf {
        self.site.dir().join(&self.forcing)
    }
}

/// A validated manifest.
#[derive(Debug, Clone)]
pub struct Manifest {
    /// The manifest file.
    pub path: PathBuf,
    /// Its text (for checksums).
    pub text: String,
    /// Title for the priors.
    pub title: Option<String>,
    /// The sites in manifest order.
    pub sites: Vec<ManifestSite>,
}

impl Manifest {
    /// Reads a manifest and loads and validates every site with its overrides.
    pub fn load(path: &Path) -> Result<Self> {
        let text = std::fs::read_to_string(path)
            .map_err(|e| Error::msg(format!("cannot read the manifest {}: {e}", path.display())))?;
        let raw: RawManifest = toml::from_str(&text).map_err(|e| toml_error(path, &text, &e))?;
        let dir = path.parent().unwrap_or(Path::new(""));
        let mut loaded: BTreeMap<PathBuf, Site> = BTreeMap::new();
        let mut load = |p: &Path| -> Result<Site> {
            if let Some(s) = loaded.get(p) {
                return Ok(s.clone());
            }
            let s = Site::load(p)?;
            loaded.insert(p.to_path_buf(), s.clone());
            Ok(s)
        };
        let mut sites: Vec<ManifestSite> = Vec::new();
        for entry in &raw.site {
            let line = line_of(&text, entry.span().start);
            let r = entry.get_ref();
            let at = |msg: String| {
                Error::msg(format!(
                    "{}: line {line}: site `{}`: {msg}",
                    path.display(),
                    r.id
                ))
            };
            if r.id.is_empty()
                || !r
                    .id
                    .chars()
                    .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
            {
                return Err(at("id must be letters, digits, '-' or '_'".into()));
            }
            if sites.iter().any(|s| s.id == r.id) {
                return Err(at("the id is used twice".into()));
            }
            let weight = r.weight.unwrap_or(1.0);
            if !(weight.is_finite() && weight >= 0.0) {
                return Err(at(format!("weight = {weight} must be finite and >= 0")));
            }
            let file = match (&r.file, &raw.template) {
                (Some(f), _) => dir.join(f),
                (None, Some(t)) => dir.join(t),
                (None, None) => return Err(at("give `file`, or a `template` at the top".into())),
            };
            let mut site = load(&file).map_err(|e| at(e.chain()))?;
            let mut overrides: Vec<(String, f64)> = Vec::new();
            for (key, v) in [
                ("site.latitude", r.latitude),
                ("site.longitude", r.longitude),
                ("vegetation.c4.cover", r.c4_cover),
            ] {
                if let Some(v) = v {
                    overrides.push((key.to_string(), v));
                }
            }
            overrides.extend(r.set.iter().map(|(k, v)| (k.clone(), *v)));
            let pairs: Vec<(&str, f64)> = overrides.iter().map(|(k, v)| (k.as_str(), *v)).collect();
            site.set_params(&pairs).map_err(|e| at(e.chain()))?;
            if let Some(f) = &r.forcing {
                let p = std::fs::canonicalize(dir.join(f))
                    .map_err(|e| at(format!("forcing `{}`: {e}", dir.join(f).display())))?;
                site.file.forcing.path = p;
            }
            let forcing = site.file.forcing.path.clone();
            sites.push(ManifestSite {
                id: r.id.clone(),
                weight,
                site,
                overrides,
                forcing,
            });
        }
        if sites.is_empty() {
            return Err(Error::msg(format!("{}: no [[site]]", path.display())));
        }
        Ok(Self {
            path: path.to_path_buf(),
            text,
            title: raw.title,
            sites,
        })
    }
}
