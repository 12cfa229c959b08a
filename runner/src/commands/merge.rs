//! `isodisc merge DIR... --out DIR`: joins the folders of a batch's shards into one, as if the
//! batch had run in one piece. The shards must be of the same batch (their `batch.json` agree but
//! for the shard), every manifest site must be finished in exactly one of them (no gaps, no
//! overlaps); the merged folder is written aside and moved into place whole.

use std::fs;
use std::path::{Path, PathBuf};

use super::batch::{combine_priors, read_done};
use crate::cli::MergeArgs;
use crate::error::{Context, Error, Result};
use crate::output::{check_out_dir, write_folder, write_json};
use crate::priors::read_priors_csv;

/// A validated `isodisc merge`.
#[derive(Debug)]
pub struct MergePlan {
    shards: Vec<PathBuf>,
    out: PathBuf,
    overwrite: bool,
    quiet: bool,
    command: String,
}

fn read_batch(dir: &Path) -> Result<serde_json::Value> {
    let not_shard = |why: &str| {
        Error::msg(format!(
            "{}: not a batch shard ({why}); give the folders written by `isodisc batch --out`",
            dir.display()
        ))
    };
    if !dir.is_dir() {
        return Err(not_shard("no such folder"));
    }
    let path = dir.join("batch.json");
    let text = fs::read_to_string(&path).map_err(|_| not_shard("it holds no batch.json"))?;
    let mut v: serde_json::Value =
        serde_json::from_str(&text).with_context(|| format!("cannot read {}", path.display()))?;
    if !v["sites"].is_array() || v.get("isodisc_version").is_none() {
        return Err(not_shard("its batch.json is not one isodisc wrote"));
    }
    v.as_object_mut().map(|o| o.remove("shard"));
    Ok(v)
}

/// The months (`YYYY-MM`) of a site folder's `priors.csv`.
fn months_of(site_dir: &Path) -> Result<Vec<String>> {
    let mut m: Vec<String> = read_priors_csv(&site_dir.join("priors.csv"))?
        .into_iter()
        .map(|r| r.month)
        .collect();
    m.dedup();
    Ok(m)
}

impl MergePlan {
    /// Checks the flags.
    pub fn from_args(args: &MergeArgs) -> Result<Self> {
        check_out_dir(&args.out, args.overwrite, &args.shards)?;
        Ok(Self {
            shards: args.shards.clone(),
            out: args.out.clone(),
            overwrite: args.overwrite,
            quiet: args.quiet,
            command: std::env::args().collect::<Vec<_>>().join(" "),
        })
    }

    /// Checks the shards and writes the merged folder.
    pub fn run(&self) -> Result<()> {
        if super::grid::is_grid_folder(&self.shards[0]) {
            return super::grid::merge_grid(&self.shards, &self.out, self.overwrite, self.quiet);
        }
        let identity = read_batch(&self.shards[0])?;
        for d in &self.shards[1..] {
            if read_batch(d)? != identity {
                return Err(Error::msg(format!(
                    "{} and {} are not shards of the same batch (manifest, spec, members, seed or \
                     period differ)",
                    self.shards[0].display(),
                    d.display()
                )));
            }
        }
        let ids: Vec<&str> = identity["sites"]
            .as_array()
            .map(|a| a.iter().filter_map(|s| s["id"].as_str()).collect())
            .unwrap_or_default();
        let mut sources: Vec<&Path> = Vec::new();
        let mut gaps: Vec<&str> = Vec::new();
        for id in &ids {
            let holders: Vec<&PathBuf> = self
                .shards
                .iter()
                .filter(|d| d.join("sites").join(id).join("done.json").is_file())
                .collect();
            match holders.as_slice() {
                [one] => sources.push(one),
                [] => gaps.push(id),
                many => {
                    return Err(Error::msg(format!(
                        "site `{id}` is finished in more than one shard: {}",
                        many.iter()
                            .map(|d| d.display().to_string())
                            .collect::<Vec<_>>()
                            .join(", ")
                    )));
                }
            }
        }
        if !gaps.is_empty() {
            return Err(Error::msg(format!(
                "{} finished in none of the shards: {}",
                if gaps.len() == 1 {
                    "1 manifest site is".to_string()
                } else {
                    format!("{} manifest sites are", gaps.len())
                },
                gaps.join(", ")
            )));
        }
        // Every site whole (its files as they were when it finished) and with every month of the
        // batch (the months of all sites together).
        let mut site_months: Vec<Vec<String>> = Vec::new();
        for (id, src) in ids.iter().zip(&sources) {
            let dir = src.join("sites").join(id);
            read_done(&dir).with_context(|| format!("site `{id}`"))?;
            site_months.push(months_of(&dir).with_context(|| format!("site `{id}`"))?);
        }
        let mut all: Vec<String> = site_months.iter().flatten().cloned().collect();
        all.sort();
        all.dedup();
        for ((id, src), months) in ids.iter().zip(&sources).zip(&site_months) {
            let missing: Vec<&str> = all
                .iter()
                .filter(|m| !months.contains(m))
                .map(String::as_str)
                .collect();
            if !missing.is_empty() {
                return Err(Error::msg(format!(
                    "site `{id}` ({}) lacks {} of the batch: {}",
                    src.join("sites").join(id).join("priors.csv").display(),
                    if missing.len() == 1 {
                        "1 month".to_string()
                    } else {
                        format!("{} months", missing.len())
                    },
                    missing.join(", ")
                )));
            }
        }
        write_folder(&self.out, self.overwrite, "merge", |tmp| {
            for (id, src) in ids.iter().zip(&sources) {
                let from = src.join("sites").join(id);
                let to = tmp.join("sites").join(id);
                fs::create_dir_all(&to)?;
                for entry in fs::read_dir(&from)? {
                    let entry = entry?;
                    fs::copy(entry.path(), to.join(entry.file_name()))
                        .with_context(|| format!("cannot copy {}", entry.path().display()))?;
                }
            }
            let mut batch = identity.clone();
            batch["shard"] = "1/1".into();
            write_json(&tmp.join("batch.json"), &batch)?;
            combine_priors(tmp, &ids, &identity)?;
            let log = serde_json::json!({
                "isodisc_version": env!("CARGO_PKG_VERSION"),
                "command": self.command,
                "shards": self.shards.iter().map(|d| d.display().to_string()).collect::<Vec<_>>(),
                "sites": ids.len(),
            });
            write_json(&tmp.join("run.json"), &log)
        })?;
        if !self.quiet {
            println!(
                "isodisc merge: {} sites from {} shards\nresults: {}",
                ids.len(),
                self.shards.len(),
                self.out.display()
            );
        }
        Ok(())
    }
}
