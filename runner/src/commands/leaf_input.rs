//! The header of an `isodisc leaf --input` file: which column sets a condition, the relative
//! humidity or a leaf parameter, which the user mapped by `--map NAME=COLUMN`, and which pass
//! through to the output unchanged (sample IDs, treatments).

use std::path::Path;

use isodisc_model::error::closest_name;
use isodisc_model::leaf::{LeafConditions, Pathway};

use crate::error::{Error, Result};

/// What an input column does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InputColumn {
    /// Sets a condition, by its index in `LeafConditions::RANGES`.
    Condition(usize),
    /// Sets the relative humidity (%).
    Rh,
    /// Sets a leaf parameter.
    Param(&'static str),
    /// Neither: copied to the output unchanged.
    Pass,
}

/// Parses the `--map NAME=COLUMN` flags: each NAME is a condition (`t_leaf`, `ppfd`, …) or `rh`,
/// each used once, and each COLUMN is named once.
pub fn parse_maps(maps: &[String]) -> Result<Vec<(String, String)>> {
    let names: Vec<&str> = LeafConditions::RANGES
        .iter()
        .map(|r| r.0)
        .chain(["rh"])
        .collect();
    let mut out: Vec<(String, String)> = Vec::new();
    for m in maps {
        let (name, column) = m
            .split_once('=')
            .map(|(a, b)| (a.trim(), b.trim()))
            .filter(|(a, b)| !a.is_empty() && !b.is_empty())
            .ok_or_else(|| Error::msg(format!("--map `{m}`: expected NAME=COLUMN")))?;
        if !names.contains(&name) {
            let hint = closest_name(name, names.iter().copied())
                .map(|k| format!(" (did you mean `{k}`?)"))
                .unwrap_or_default();
            return Err(Error::msg(format!(
                "--map {name}={column}: `{name}` is not a condition; use one of {}{hint}",
                names.join(", ")
            )));
        }
        if let Some((n, _)) = out.iter().find(|(n, c)| n == name || c == column) {
            return Err(Error::msg(format!(
                "--map {name}={column}: `{}` is mapped twice",
                if n == name { name } else { column }
            )));
        }
        out.push((name.to_string(), column.to_string()));
    }
    Ok(out)
}

/// What each column of `header` does. A column whose name is close to a condition's or a
/// parameter's (a likely typo) is an error; a mapped column that is not in the header is one too.
pub fn map_columns(
    header: &[String],
    pathway: Pathway,
    path: &Path,
    maps: &[(String, String)],
) -> Result<Vec<InputColumn>> {
    let specs = pathway.specs();
    let own = |h: &str| -> Option<InputColumn> {
        if let Some(k) = LeafConditions::RANGES.iter().position(|r| r.0 == h) {
            Some(InputColumn::Condition(k))
        } else if h == "rh" {
            Some(InputColumn::Rh)
        } else {
            specs
                .iter()
                .find(|s| s.name == h)
                .map(|s| InputColumn::Param(s.name))
        }
    };
    for (name, column) in maps {
        if !header.iter().any(|h| h == column) {
            let hint = closest_name(column, header.iter().map(String::as_str))
                .map(|k| format!(" (did you mean `{k}`?)"))
                .unwrap_or_default();
            return Err(Error::msg(format!(
                "{}: --map {name}={column}: the header has no column `{column}`{hint}",
                path.display()
            )));
        }
        if header.iter().any(|h| h == name) {
            return Err(Error::msg(format!(
                "{}: --map {name}={column}: the header already has a column `{name}`",
                path.display()
            )));
        }
    }
    header
        .iter()
        .enumerate()
        .map(|(i, h)| {
            let h = h.as_str();
            if let Some((name, _)) = maps.iter().find(|(_, c)| c == h) {
                return Ok(own(name).expect("parse_maps accepts conditions and rh only"));
            }
            if let Some(c) = own(h) {
                return Ok(c);
            }
            let known = LeafConditions::RANGES
                .iter()
                .map(|r| r.0)
                .chain(["rh"])
                .chain(specs.iter().map(|s| s.name));
            match closest_name(h, known) {
                Some(k) => Err(Error::msg(format!(
                    "{}: line 1, column {} (`{h}`): not a condition or {} parameter (did you mean \
                     `{k}`?); rename it, or map it with `--map {k}={h}`",
                    path.display(),
                    i + 1,
                    pathway.as_str()
                ))),
                None => Ok(InputColumn::Pass),
            }
        })
        .collect()
}

/// A cell written into a CSV row: quoted when it holds a comma, a quote or a line break.
pub fn push_csv_cell(buf: &mut Vec<u8>, cell: &str) {
    if cell.contains([',', '"', '\n', '\r']) {
        buf.push(b'"');
        buf.extend_from_slice(cell.replace('"', "\"\"").as_bytes());
        buf.push(b'"');
    } else {
        buf.extend_from_slice(cell.as_bytes());
    }
}
