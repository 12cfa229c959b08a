//! `isodisc merge DIR... --out DIR`: joins the folders of a batch's shards into one, as if the
//! batch had run in one piece. The shards must be of the same batch (their `batch.json` agree but
//! for the shard), every manifest site must be finished in exactly one of them (no gaps, no
//! overlaps); the merged folder is written aside and moved into place whole.

use std::fs;
use std::path::{Path, PathBuf};

use super::batch::combine_priors;
use crate::cli::MergeArgs;
use crate::error::{Context, Error, Result};
use crate::output::{check_out_dir, replace_dir, sibling, write_json};

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
    let path = dir.join("batch.json");
    let text = fs::read_to_string(&path)
        .with_context(|| format!("{}: not a batch folder", dir.display()))?;
    let mut v: serde_json::Value =
        serde_json::from_str(&text).with_context(|| format!("cannot read {}", path.display()))?;
    v.as_object_mut().map(|o| o.remove("shard"));
    Ok(v)
}

impl MergePlan {
    /// Checks the flags.
    pub fn from_args(args: &MergeArgs) -> Result<Self> {
        check_out_dir(&args.out, args.overwrite)?;
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
                "{} manifest site(s) are finished in none of the shards: {}",
                gaps.len(),
                gaps.join(", ")
            )));
        }
        let tmp = sibling(&self.out, "tmp");
        if tmp.exists() {
            fs::remove_dir_all(&tmp)?;
        }
        let result = (|| -> Result<()> {
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
            combine_priors(&tmp, &ids, &identity)?;
            let log = serde_json::json!({
                "isodisc_version": env!("CARGO_PKG_VERSION"),
                "command": self.command,
                "shards": self.shards.iter().map(|d| d.display().to_string()).collect::<Vec<_>>(),
                "sites": ids.len(),
            });
            write_json(&tmp.join("run.json"), &log)?;
            replace_dir(&tmp, &self.out, self.overwrite)
        })();
        if result.is_err() {
            let _ = fs::remove_dir_all(&tmp);
        }
        result?;
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
