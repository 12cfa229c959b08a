//! Gridded weather and maps from NetCDF files that follow the CF conventions (1.8).
//!
//! Files are read with the pure-Rust `netcdf3` crate: NetCDF classic (CDF-1) and 64-bit offset
//! (CDF-2). A NetCDF-4 (HDF5) file is recognised by its signature and refused with the command
//! that converts it; see docs/grid.md for why.
//!
//! What is applied, in CF order (CF 1.8, section 8.1): values equal to `_FillValue` or
//! `missing_value` (compared in the stored type) become NaN, then `value · scale_factor +
//! add_offset`. Units come from each variable's `units` attribute (or the grid file's `units`
//! table) and are converted by the same table as the CSV weather reader
//! ([`crate::forcing::Variable`] units), after spelling variants such as `W/m2` or `kg m**-2 s**-1`
//! are written the way that table names them. Time follows [`cf_time`].

pub mod cf_time;
pub mod forcing;

use std::path::{Path, PathBuf};

use netcdf3::{DataVector, FileReader, Variable as NcVariable};

use crate::error::{Error, Result};

pub use forcing::GriddedForcing;

/// Opens a NetCDF classic file, refusing NetCDF-4/HDF5 and CDF-5 with a message that says what
/// the file is.
pub fn open(path: &Path) -> Result<FileReader> {
    let mut magic = [0u8; 4];
    let read = std::fs::File::open(path).and_then(|mut f| {
        use std::io::Read;
        f.read_exact(&mut magic)
    });
    if let Err(e) = read {
        return Err(Error::msg(format!("cannot read {}: {e}", path.display())));
    }
    match &magic {
        b"CDF\x01" | b"CDF\x02" => {}
        b"\x89HDF" => {
            return Err(Error::msg(format!(
                "{}: a NetCDF-4/HDF5 file; isodisc reads NetCDF classic files (CDF-1, CDF-2) \
                 with a pure-Rust reader: convert it with `nccopy -k 64-bit-offset IN OUT` (or \
                 xarray: to_netcdf(OUT, format=\"NETCDF3_64BIT\"))",
                path.display()
            )));
        }
        b"CDF\x05" => {
            return Err(Error::msg(format!(
                "{}: a CDF-5 (64-bit data) file; isodisc reads NetCDF classic files (CDF-1, \
                 CDF-2): convert it with `nccopy -k 64-bit-offset IN OUT`",
                path.display()
            )));
        }
        _ => {
            return Err(Error::msg(format!(
                "{}: not a NetCDF file (it does not start with the NetCDF signature)",
                path.display()
            )));
        }
    }
    FileReader::open(path).map_err(|e| {
        Error::msg(format!(
            "{}: the NetCDF header cannot be read ({e:?})",
            path.display()
        ))
    })
}

/// A text attribute of a variable.
pub fn attr_text(var: &NcVariable, name: &str) -> Option<String> {
    var.get_attr(name).and_then(|a| a.get_as_string())
}

/// The first value of a numeric attribute of a variable, whatever its type.
pub fn attr_number(var: &NcVariable, name: &str) -> Option<f64> {
    let a = var.get_attr(name)?;
    a.get_f64()
        .and_then(|v| v.first().copied())
        .or_else(|| a.get_f32().and_then(|v| v.first().map(|x| f64::from(*x))))
        .or_else(|| a.get_i32().and_then(|v| v.first().map(|x| f64::from(*x))))
        .or_else(|| a.get_i16().and_then(|v| v.first().map(|x| f64::from(*x))))
        .or_else(|| a.get_i8().and_then(|v| v.first().map(|x| f64::from(*x))))
        .or_else(|| a.get_u8().and_then(|v| v.first().map(|x| f64::from(*x))))
}

/// Every value of a numeric attribute, whatever its type.
fn attr_numbers(var: &NcVariable, name: &str) -> Vec<f64> {
    let Some(a) = var.get_attr(name) else {
        return Vec::new();
    };
    if let Some(v) = a.get_f64() {
        return v.to_vec();
    }
    if let Some(v) = a.get_f32() {
        return v.iter().map(|x| f64::from(*x)).collect();
    }
    if let Some(v) = a.get_i32() {
        return v.iter().map(|x| f64::from(*x)).collect();
    }
    if let Some(v) = a.get_i16() {
        return v.iter().map(|x| f64::from(*x)).collect();
    }
    if let Some(v) = a.get_i8() {
        return v.iter().map(|x| f64::from(*x)).collect();
    }
    a.get_u8()
        .map(|v| v.iter().map(|x| f64::from(*x)).collect())
        .unwrap_or_default()
}

/// The values of a variable as numbers: fill and missing values NaN, packing undone.
pub fn read_values(reader: &mut FileReader, path: &Path, name: &str) -> Result<Vec<f64>> {
    let var = reader
        .data_set()
        .get_var(name)
        .ok_or_else(|| missing_variable(reader, path, name))?;
    let scale = attr_number(var, "scale_factor").unwrap_or(1.0);
    let offset = attr_number(var, "add_offset").unwrap_or(0.0);
    let fill = attr_numbers(var, "_FillValue");
    let has_fill = !fill.is_empty();
    let mut codes = fill;
    codes.extend(attr_numbers(var, "missing_value"));
    let data = reader.read_var(name).map_err(|e| {
        Error::msg(format!(
            "{}, variable `{name}`: cannot be read ({e:?})",
            path.display()
        ))
    })?;
    // Without a _FillValue attribute, the library's default fill of the type marks unwritten
    // values (NetCDF user guide, "Fill Values").
    let default_fill = match &data {
        DataVector::I8(_) => f64::from(netcdf3::NC_FILL_I8),
        DataVector::U8(_) => f64::from(netcdf3::NC_FILL_U8),
        DataVector::I16(_) => f64::from(netcdf3::NC_FILL_I16),
        DataVector::I32(_) => f64::from(netcdf3::NC_FILL_I32),
        DataVector::F32(_) => f64::from(netcdf3::NC_FILL_F32),
        DataVector::F64(_) => netcdf3::NC_FILL_F64,
    };
    if !has_fill {
        codes.push(default_fill);
    }
    let unpack = |raw: f64| {
        if raw.is_nan() || codes.contains(&raw) {
            f64::NAN
        } else {
            raw * scale + offset
        }
    };
    // Float fill values compare in the stored type: an f32 1e20 is not the f64 1e20.
    let values = match data {
        DataVector::I8(v) => v.into_iter().map(|x| unpack(f64::from(x))).collect(),
        DataVector::U8(v) => v.into_iter().map(|x| unpack(f64::from(x))).collect(),
        DataVector::I16(v) => v.into_iter().map(|x| unpack(f64::from(x))).collect(),
        DataVector::I32(v) => v.into_iter().map(|x| unpack(f64::from(x))).collect(),
        DataVector::F32(v) => {
            let codes32: Vec<f32> = codes.iter().map(|c| *c as f32).collect();
            v.into_iter()
                .map(|x| {
                    if x.is_nan() || codes32.contains(&x) {
                        f64::NAN
                    } else {
                        f64::from(x) * scale + offset
                    }
                })
                .collect()
        }
        DataVector::F64(v) => v.into_iter().map(unpack).collect(),
    };
    Ok(values)
}

/// "no variable `x`" with the file's variables listed.
fn missing_variable(reader: &FileReader, path: &Path, name: &str) -> Error {
    let names = reader.data_set().get_var_names();
    Error::msg(format!(
        "{}: no variable `{name}` (the file has {})",
        path.display(),
        names
            .iter()
            .map(|n| format!("`{n}`"))
            .collect::<Vec<_>>()
            .join(", ")
    ))
}

/// Names of the latitude and longitude coordinate variables (CF 1.8, section 4.1–4.2: units
/// `degrees_north`/`degrees_east`, else the names `lat`/`latitude` and `lon`/`longitude`).
pub fn lat_lon_names(reader: &FileReader, path: &Path) -> Result<(String, String)> {
    let vars = reader.data_set().get_vars();
    let find = |units: &[&str], names: &[&str]| -> Option<String> {
        vars.iter()
            .find(|v| {
                v.num_dims() == 1
                    && attr_text(v, "units")
                        .is_some_and(|u| units.contains(&u.trim().to_ascii_lowercase().as_str()))
            })
            .or_else(|| {
                vars.iter()
                    .find(|v| v.num_dims() == 1 && names.contains(&v.name()))
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
            path.display()
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
    pub fn read(reader: &mut FileReader, path: &Path) -> Result<GridAxes> {
        let (lat_name, lon_name) = lat_lon_names(reader, path)?;
        let dim_of = |reader: &FileReader, name: &str| {
            reader
                .data_set()
                .get_var(name)
                .and_then(|v| v.dim_names().into_iter().next())
                .unwrap_or_default()
        };
        let lat_dim = dim_of(reader, &lat_name);
        let lon_dim = dim_of(reader, &lon_name);
        let lat = read_values(reader, path, &lat_name)?;
        let lon = read_values(reader, path, &lon_name)?;
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
    let mut reader = open(path)?;
    let axes = GridAxes::read(&mut reader, path)?;
    grid.check_same(&axes, &format!("variable `{name}`"))?;
    let var = reader
        .data_set()
        .get_var(name)
        .ok_or_else(|| missing_variable(&reader, path, name))?;
    let dims = var.dim_names();
    let sizes: Vec<usize> = var.get_dims().iter().map(|d| d.size()).collect();
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
    read_values(&mut reader, path, name)
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
