//! Gridded weather and maps from NetCDF files that follow the CF conventions (1.8).
//!
//! Files are read with the pure-Rust `netcdf-reader` crate: NetCDF classic (CDF-1), 64-bit offset
//! (CDF-2), 64-bit data (CDF-5) and NetCDF-4 (HDF5; chunked and deflate- or shuffle-filtered
//! variables too). Classic files are memory-mapped; every read is a hyperslab, so a grid run holds
//! only the cells it is running (see [`forcing::GriddedForcing::read_window`]). Only the root group
//! of a NetCDF-4 file is read.
//!
//! What is applied, in CF order (CF 1.8, section 8.1): values equal to `_FillValue` or
//! `missing_value` (compared in the stored type) become NaN, then `value · scale_factor +
//! add_offset`. Units come from each variable's `units` attribute (or the grid file's `units`
//! table) and are converted by the same table as the CSV weather reader
//! ([`crate::forcing::Variable`] units), after spelling variants such as `W/m2` or `kg m**-2 s**-1`
//! are written the way that table names them. Time follows [`cf_time`].

pub mod cf_time;
pub mod forcing;
pub mod site;

use std::ops::Range;
use std::path::{Path, PathBuf};

use netcdf_reader::{NcFile, NcFormat, NcSliceInfo, NcSliceInfoElem, NcType, NcVariable};

use crate::error::{Error, Result};

pub use forcing::GriddedForcing;

/// An open NetCDF file and its path (for messages).
pub struct NcIn {
    file: NcFile,
    path: PathBuf,
}

impl std::fmt::Debug for NcIn {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "NcIn({})", self.path.display())
    }
}

/// Opens a NetCDF file of any format (classic, 64-bit offset, 64-bit data, NetCDF-4).
pub fn open(path: &Path) -> Result<NcIn> {
    let file = NcFile::open(path).map_err(|e| match e {
        netcdf_reader::Error::InvalidMagic => Error::msg(format!(
            "{}: not a NetCDF file (it does not start with the NetCDF or HDF5 signature)",
            path.display()
        )),
        netcdf_reader::Error::Io(e) => Error::msg(format!("cannot read {}: {e}", path.display())),
        e => Error::msg(format!(
            "{}: the NetCDF header cannot be read ({e})",
            path.display()
        )),
    })?;
    Ok(NcIn {
        file,
        path: path.to_path_buf(),
    })
}

impl NcIn {
    /// The file's path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The file's format, as the NetCDF user guide names it.
    pub fn format_name(&self) -> &'static str {
        match self.file.format() {
            NcFormat::Classic => "NetCDF classic",
            NcFormat::Offset64 => "NetCDF 64-bit offset",
            NcFormat::Cdf5 => "NetCDF 64-bit data (CDF-5)",
            NcFormat::Nc4 => "NetCDF-4",
            NcFormat::Nc4Classic => "NetCDF-4 classic model",
        }
    }

    /// The variables of the root group.
    pub fn variables(&self) -> &[NcVariable] {
        self.file.variables().unwrap_or(&[])
    }

    /// Names of the variables of the root group.
    pub fn var_names(&self) -> Vec<String> {
        self.variables().iter().map(|v| v.name.clone()).collect()
    }

    /// A variable, or "no variable `x`" with the file's variables listed.
    pub fn var(&self, name: &str) -> Result<&NcVariable> {
        self.variables()
            .iter()
            .find(|v| v.name == name)
            .ok_or_else(|| {
                Error::msg(format!(
                    "{}: no variable `{name}` (the file has {})",
                    self.path.display(),
                    self.var_names()
                        .iter()
                        .map(|n| format!("`{n}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ))
            })
    }

    /// Every value of a variable as numbers: fill and missing values NaN, packing undone.
    pub fn read_values(&self, name: &str) -> Result<Vec<f64>> {
        let ndim = self.var(name)?.ndim();
        self.read_slab(name, &vec![None; ndim])
    }

    /// A hyperslab of a variable, `[first dim][…][last dim]` in file order (index ranges per
    /// dimension; None: the whole dimension), with fill values NaN and packing undone.
    pub fn read_slab(&self, name: &str, ranges: &[Option<Range<usize>>]) -> Result<Vec<f64>> {
        let mut out = Vec::new();
        self.read_slab_with(name, ranges, |x| out.push(x))?;
        Ok(out)
    }

    /// [`NcIn::read_slab`], each value handed to `put` in order instead of collected: float
    /// variables are read as f32, so a slab costs 4 bytes a value while it is decoded.
    pub fn read_slab_with(
        &self,
        name: &str,
        ranges: &[Option<Range<usize>>],
        mut put: impl FnMut(f64),
    ) -> Result<()> {
        let var = self.var(name)?;
        let selection = NcSliceInfo {
            selections: ranges
                .iter()
                .zip(var.dimensions())
                .map(|(r, d)| {
                    let r = r.clone().unwrap_or(0..d.size as usize);
                    NcSliceInfoElem::Slice {
                        start: r.start as u64,
                        end: r.end as u64,
                        step: 1,
                    }
                })
                .collect(),
        };
        let cannot = |e: netcdf_reader::Error| {
            Error::msg(format!(
                "{}, variable `{name}`: cannot be read ({e})",
                self.path.display()
            ))
        };
        let scale = attr_number(var, "scale_factor").unwrap_or(1.0);
        let offset = attr_number(var, "add_offset").unwrap_or(0.0);
        let mut codes = attr_numbers(var, "_FillValue");
        // Without a _FillValue attribute, the library's default fill of the type marks unwritten
        // values (NetCDF user guide, "Fill Values").
        if codes.is_empty()
            && let Some(f) = default_fill(&var.dtype)
        {
            codes.push(f);
        }
        codes.extend(attr_numbers(var, "missing_value"));
        let unpack = |raw: f64| {
            if raw.is_nan() || codes.contains(&raw) {
                f64::NAN
            } else {
                raw * scale + offset
            }
        };
        if var.dtype == NcType::Float {
            // Float fill values compare in the stored type: an f32 1e20 is not the f64 1e20.
            let codes32: Vec<f32> = codes.iter().map(|c| *c as f32).collect();
            // Chunks of a NetCDF-4 variable are decompressed in parallel (rayon's pool).
            let data = self
                .file
                .read_variable_slice_parallel::<f32>(name, &selection)
                .map_err(cannot)?;
            for &x in data.iter() {
                put(if x.is_nan() || codes32.contains(&x) {
                    f64::NAN
                } else {
                    f64::from(x) * scale + offset
                });
            }
        } else {
            let data = self
                .file
                .read_variable_slice_as_f64(name, &selection)
                .map_err(cannot)?;
            for &x in data.iter() {
                put(unpack(x));
            }
        }
        Ok(())
    }
}

/// The default fill value of a numeric type (NetCDF user guide, "Fill Values": `NC_FILL_*`).
fn default_fill(t: &NcType) -> Option<f64> {
    Some(match t {
        NcType::Byte => f64::from(netcdf3::NC_FILL_I8),
        NcType::Short => f64::from(netcdf3::NC_FILL_I16),
        NcType::Int => f64::from(netcdf3::NC_FILL_I32),
        NcType::Float => f64::from(netcdf3::NC_FILL_F32),
        NcType::Double => netcdf3::NC_FILL_F64,
        NcType::UByte => 255.0,
        NcType::UShort => 65535.0,
        NcType::UInt => 4294967295.0,
        NcType::Int64 => -9223372036854775806.0,
        NcType::UInt64 => 18446744073709551614.0,
        _ => return None,
    })
}

/// A text attribute of a variable.
pub fn attr_text(var: &NcVariable, name: &str) -> Option<String> {
    var.attribute(name).and_then(|a| a.value.as_string())
}

/// The first value of a numeric attribute of a variable, whatever its type.
pub fn attr_number(var: &NcVariable, name: &str) -> Option<f64> {
    var.attribute(name).and_then(|a| a.value.as_f64())
}

/// Every value of a numeric attribute, whatever its type.
fn attr_numbers(var: &NcVariable, name: &str) -> Vec<f64> {
    var.attribute(name)
        .and_then(|a| a.value.as_f64_vec())
        .unwrap_or_default()
}

/// Dimension names of a variable.
pub fn dim_names(var: &NcVariable) -> Vec<String> {
    var.dimensions().iter().map(|d| d.name.clone()).collect()
}

/// Names of the latitude and longitude coordinate variables (CF 1.8, section 4.1–4.2: units
/// `degrees_north`/`degrees_east`, else the names `lat`/`latitude` and `lon`/`longitude`).
pub fn lat_lon_names(reader: &NcIn) -> Result<(String, String)> {
    let vars = reader.variables();
    let find = |units: &[&str], names: &[&str]| -> Option<String> {
        vars.iter()
            .find(|v| {
                v.ndim() == 1
                    && attr_text(v, "units")
                        .is_some_and(|u| units.contains(&u.trim().to_ascii_lowercase().as_str()))
            })
            .or_else(|| {
                vars.iter()
                    .find(|v| v.ndim() == 1 && names.contains(&v.name()))
            })
            .map(|v| v.name().to_string())
    };
    let lat = find(
        &["degrees_north", "degree_north", "degrees_n", "degree_n"],
        &["lat", "latitude"],
    );
    let lon = find(
        &["degrees_east", "degree_east", "degrees_e", "degree_e"],
        &["lon", "longitude"],
    );
    match (lat, lon) {
        (Some(a), Some(b)) => Ok((a, b)),
        _ => Err(Error::msg(format!(
            "{}: no latitude and longitude coordinates (1-D variables with units \
             degrees_north and degrees_east, or named lat and lon)",
            reader.path.display()
        ))),
    }
}

/// Cell-centre coordinates of a grid.
#[derive(Debug, Clone, PartialEq)]
pub struct GridAxes {
    /// Latitudes, ° north.
    pub lat: Vec<f64>,
    /// Longitudes, ° east.
    pub lon: Vec<f64>,
    /// Dimension names of latitude and longitude in the file the axes came from.
    pub lat_dim: String,
    pub lon_dim: String,
    /// The file the axes came from, for messages.
    pub path: PathBuf,
}

/// Two grids match when their coordinates agree within this, ° (common practice: files written
/// in float32 differ from float64 by up to ~1e-6).
const GRID_TOLERANCE_DEG: f64 = 1e-4;

impl GridAxes {
    /// The latitude and longitude coordinates of a file.
    pub fn read(reader: &NcIn) -> Result<GridAxes> {
        let path = reader.path();
        let (lat_name, lon_name) = lat_lon_names(reader)?;
        let dim_of = |name: &str| -> Result<String> {
            Ok(dim_names(reader.var(name)?)
                .into_iter()
                .next()
                .unwrap_or_default())
        };
        let lat_dim = dim_of(&lat_name)?;
        let lon_dim = dim_of(&lon_name)?;
        let lat = reader.read_values(&lat_name)?;
        let lon = reader.read_values(&lon_name)?;
        for (name, v, lo, hi) in [
            (&lat_name, &lat, -90.0, 90.0),
            (&lon_name, &lon, -360.0, 360.0),
        ] {
            if let Some(i) = v.iter().position(|x| !(lo..=hi).contains(x)) {
                return Err(Error::msg(format!(
                    "{}, variable `{name}`, index {i}: {} is outside {lo}…{hi}°",
                    path.display(),
                    v[i]
                )));
            }
        }
        Ok(GridAxes {
            lat,
            lon,
            lat_dim,
            lon_dim,
            path: path.to_path_buf(),
        })
    }

    /// Number of cells.
    pub fn cells(&self) -> usize {
        self.lat.len() * self.lon.len()
    }

    /// Checks that `other` (read from another file) is the same grid; the error names both files,
    /// the coordinate and the first index that differs.
    pub fn check_same(&self, other: &GridAxes, what: &str) -> Result<()> {
        for (name, a, b) in [
            ("latitude", &self.lat, &other.lat),
            ("longitude", &self.lon, &other.lon),
        ] {
            if a.len() != b.len() {
                return Err(Error::msg(format!(
                    "{} ({what}) has {} {name}s but {} has {}: the grids do not match",
                    other.path.display(),
                    b.len(),
                    self.path.display(),
                    a.len()
                )));
            }
            if let Some(i) = (0..a.len()).find(|&i| (a[i] - b[i]).abs() > GRID_TOLERANCE_DEG) {
                return Err(Error::msg(format!(
                    "{} ({what}): {name} index {i} is {}° but {} has {}°: the grids do not match",
                    other.path.display(),
                    b[i],
                    self.path.display(),
                    a[i]
                )));
            }
        }
        Ok(())
    }
}

/// A 2-D field `[lat][lon]` of a file (a cover fraction, LAI, soil parameter, elevation), checked
/// to lie on `grid`. A leading time dimension of length 1 is accepted.
pub fn read_map(path: &Path, name: &str, grid: &GridAxes) -> Result<Vec<f64>> {
    let reader = open(path)?;
    let axes = GridAxes::read(&reader)?;
    grid.check_same(&axes, &format!("variable `{name}`"))?;
    let var = reader.var(name)?;
    let dims = dim_names(var);
    let sizes: Vec<u64> = var.dimensions().iter().map(|d| d.size).collect();
    let spatial = dims.len() >= 2
        && dims[dims.len() - 2] == axes.lat_dim
        && dims[dims.len() - 1] == axes.lon_dim
        && sizes[..dims.len() - 2].iter().all(|&n| n == 1);
    if !spatial {
        return Err(Error::msg(format!(
            "{}, variable `{name}`: dimensions ({}) are not ({}, {})",
            path.display(),
            dims.join(", "),
            axes.lat_dim,
            axes.lon_dim
        )));
    }
    reader.read_values(name)
}

/// A unit as the forcing unit table names it: `W/m2`, `W m**-2` and `W m^-2` are `W m-2`; `K`
/// also as `kelvin`; `1` is `kg kg-1` for specific humidity; `mm s-1` is `kg m-2 s-1`.
pub fn table_unit(var: crate::forcing::Variable, unit: &str) -> String {
    use crate::forcing::Variable;
    let mut parts: Vec<String> = Vec::new();
    let text = unit.trim().replace("**", "").replace('^', "");
    for (k, piece) in text.split('/').enumerate() {
        for token in piece.split_whitespace() {
            let token = token.replace('·', "").replace('.', " ");
            for t in token.split_whitespace() {
                if k == 0 {
                    parts.push(t.to_string());
                } else {
                    // `m2` after a slash is m-2.
                    let (base, power) = match t.find(|c: char| c.is_ascii_digit() || c == '-') {
                        Some(i) => (&t[..i], t[i..].parse::<i32>().unwrap_or(1)),
                        None => (t, 1),
                    };
                    parts.push(format!("{base}{}", -power));
                }
            }
        }
    }
    let joined = parts.join(" ");
    let lower = joined.to_ascii_lowercase();
    match (var, lower.as_str()) {
        (_, "kelvin" | "degk" | "deg_k" | "degree_kelvin" | "degrees_kelvin") => "K".into(),
        (_, "celsius" | "degree_celsius" | "degrees_celsius" | "deg_c" | "°c") => "degC".into(),
        (Variable::SpecificHumidity, "1" | "kg kg-1" | "kg/kg") => "kg kg-1".into(),
        (Variable::Precip, "mm s-1" | "kg m-2 s-1") => "kg m-2 s-1".into(),
        (Variable::Co2, "1e-6" | "ppmv") => "ppm".into(),
        (Variable::Rh, "1") => "fraction".into(),
        (Variable::Swc, "1") => "m3 m-3".into(),
        (Variable::Lai, "1") => "m2 m-2".into(),
        _ => joined,
    }
}
