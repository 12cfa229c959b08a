//! `isodisc presets`: the vegetation presets a site file's `preset = "NAME"` fills in, with every
//! value, its unit and its source (the table lives in `isodisc_model::presets`).

use std::io::Write;

use isodisc_model::presets::{PRESETS, VegetationPreset};

use crate::cli::{Format, PresetsArgs};
use crate::error::Result;

/// A validated `isodisc presets`.
#[derive(Debug, Clone)]
pub struct PresetsPlan {
    format: Format,
    name: Option<&'static VegetationPreset>,
}

impl PresetsPlan {
    /// Checks the preset name, if one is given.
    pub fn from_args(args: &PresetsArgs) -> Result<Self> {
        let name = args
            .name
            .as_deref()
            .map(isodisc_model::presets::preset)
            .transpose()?;
        Ok(Self {
            format: args.format,
            name,
        })
    }

    /// Prints the presets to standard output.
    pub fn run(&self) -> Result<()> {
        let stdout = std::io::stdout();
        let mut w = stdout.lock();
        let list: Vec<&VegetationPreset> = match self.name {
            Some(p) => vec![p],
            None => PRESETS.iter().collect(),
        };
        write_presets(&list, self.format, &mut w)
    }
}

/// One row per (preset, key): the pathway and phenology rows first, then the values.
fn rows(p: &VegetationPreset) -> Vec<[String; 5]> {
    let mut rows = vec![
        [
            p.name.into(),
            "pathway".into(),
            p.pathway.as_str().into(),
            "-".into(),
            p.description.into(),
        ],
        [
            p.name.into(),
            "phenology".into(),
            p.phenology.as_str().into(),
            "-".into(),
            if p.phenology == isodisc_model::phenology::PhenologyKind::GsiBudburst {
                "with lai = \"phenology\" (the default with a preset); Jolly, Nemani & Running \
                 2005; budburst at 200 degree-days above 5 C, Murray, Cannell & Smith 1989 (from \
                 memory)"
            } else {
                "with lai = \"phenology\" (the default with a preset); Jolly, Nemani & Running 2005"
            }
            .into(),
        ],
    ];
    rows.extend(p.values.iter().map(|v| {
        [
            p.name.into(),
            v.key.into(),
            v.value.to_string(),
            v.unit.into(),
            v.source.into(),
        ]
    }));
    rows
}

/// Writes the presets as an aligned table, CSV (`preset,key,value,unit,source`) or JSON.
pub fn write_presets(list: &[&VegetationPreset], format: Format, w: &mut dyn Write) -> Result<()> {
    match format {
        Format::Table => {
            for (i, p) in list.iter().enumerate() {
                if i > 0 {
                    writeln!(w)?;
                }
                writeln!(w, "{} ({}): {}", p.name, p.pathway.as_str(), p.description)?;
                writeln!(w, "  {:<14} {:>14} {:<14} source", "key", "value", "unit")?;
                for [_, key, value, unit, source] in rows(p) {
                    writeln!(w, "  {key:<14} {value:>14} {unit:<14} {source}")?;
                }
            }
        }
        Format::Csv => {
            let mut cw = csv::Writer::from_writer(w);
            cw.write_record(["preset", "key", "value", "unit", "source"])?;
            for p in list {
                for r in rows(p) {
                    cw.write_record(&r)?;
                }
            }
            cw.flush()?;
        }
        Format::Json => {
            let out: Vec<serde_json::Value> = list
                .iter()
                .map(|p| {
                    let values: Vec<serde_json::Value> = p
                        .values
                        .iter()
                        .map(|v| {
                            serde_json::json!({
                                "key": v.key, "value": v.value, "unit": v.unit, "source": v.source,
                            })
                        })
                        .collect();
                    serde_json::json!({
                        "name": p.name,
                        "pathway": p.pathway.as_str(),
                        "description": p.description,
                        "phenology": p.phenology.as_str(),
                        "values": values,
                    })
                })
                .collect();
            writeln!(w, "{}", serde_json::to_string_pretty(&out)?)?;
        }
    }
    Ok(())
}
