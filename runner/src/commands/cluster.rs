//! `isodisc cluster-script`: writes a ready, commented submission script that runs a batch (a
//! manifest of sites) or a grid (a grid file, by blocks of cells) as a Slurm array job (one task
//! per shard, each taking its shard from the array-job environment with `--shard env`) and a merge
//! job that starts only when every task succeeded (`--dependency=afterok`). The user reads it,
//! edits the resources, and runs it with bash.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use crate::cli::ClusterScriptArgs;
use crate::error::{Context, Error, Result};
use crate::output::write_atomic;

/// What the array tasks run.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    /// `isodisc batch MANIFEST`: sites.
    Batch,
    /// `isodisc grid GRID.toml`: blocks of cells.
    Grid,
}

/// A grid file has a `[forcing]` table naming NetCDF `files`; a manifest does not.
fn kind_of(path: &Path) -> Result<Kind> {
    let text =
        std::fs::read_to_string(path).with_context(|| format!("cannot read {}", path.display()))?;
    let table: toml::Table = text
        .parse()
        .map_err(|e: toml::de::Error| Error::msg(format!("{}: {e}", path.display())))?;
    let grid = table
        .get("forcing")
        .and_then(|f| f.as_table())
        .is_some_and(|f| f.contains_key("files"));
    Ok(if grid { Kind::Grid } else { Kind::Batch })
}

/// The ensemble every site of a batch runs (`isodisc batch --spec/--posterior --members --seed`).
#[derive(Debug, Clone)]
struct Ensemble {
    spec: Option<PathBuf>,
    posterior: Option<PathBuf>,
    members: u32,
    seed: u64,
}

/// A validated `isodisc cluster-script`.
#[derive(Debug, Clone)]
pub struct ClusterScriptPlan {
    kind: Kind,
    manifest: PathBuf,
    results: PathBuf,
    isodisc: PathBuf,
    shards: u32,
    threads: u32,
    time: String,
    mem: String,
    partition: Option<String>,
    account: Option<String>,
    /// The ensemble each site runs: the spec, the fits' folder, members and seed.
    ensemble: Option<Ensemble>,
    out: PathBuf,
}

fn absolute(p: &Path) -> Result<PathBuf> {
    std::path::absolute(p).with_context(|| format!("cannot make {} absolute", p.display()))
}

/// `HH:MM:SS` or `D-HH:MM:SS`, as Slurm takes a time limit.
fn valid_time(t: &str) -> bool {
    let (days, rest) = match t.split_once('-') {
        Some((d, r)) => (Some(d), r),
        None => (None, t),
    };
    let parts: Vec<&str> = rest.split(':').collect();
    days.is_none_or(|d| !d.is_empty() && d.bytes().all(|b| b.is_ascii_digit()))
        && parts.len() == 3
        && parts
            .iter()
            .all(|p| !p.is_empty() && p.bytes().all(|b| b.is_ascii_digit()))
}

/// A memory request as Slurm takes it: a number with an optional K, M, G or T.
fn valid_mem(m: &str) -> bool {
    let digits = m.trim_end_matches(['K', 'M', 'G', 'T']);
    !digits.is_empty() && digits.bytes().all(|b| b.is_ascii_digit()) && m.len() - digits.len() <= 1
}

/// Refuses a value that would reach the shell or an `#SBATCH` line as anything but plain text:
/// control characters (a newline would start a command), quotes, `$`, backquotes, backslashes and
/// `!`; with `words_only`, also spaces and `%` (an `#SBATCH` line splits at spaces and expands `%`).
fn check_shell_safe(flag: &str, value: &str, words_only: bool) -> Result<()> {
    let bad = value.chars().find(|&c| {
        c.is_control() || "\"'`$\\!".contains(c) || (words_only && (c.is_whitespace() || c == '%'))
    });
    if let Some(c) = bad {
        return Err(Error::msg(format!(
            "{flag} {value:?}: the character {c:?} is not allowed here: the value is written into a \
             shell script run on the cluster{}",
            if words_only {
                " (letters, digits and . _ - , / : + = only)"
            } else {
                ""
            }
        )));
    }
    if value.is_empty() {
        return Err(Error::msg(format!("{flag}: empty")));
    }
    Ok(())
}

impl ClusterScriptPlan {
    /// Checks the arguments; every path in the script is made absolute, since jobs start elsewhere.
    pub fn from_args(a: &ClusterScriptArgs) -> Result<Self> {
        if !a.manifest.is_file() {
            return Err(Error::msg(format!(
                "manifest or grid file {} not found",
                a.manifest.display()
            )));
        }
        let kind = kind_of(&a.manifest)?;
        if a.shards == 0 || a.shards > 100_000 {
            return Err(Error::msg(format!(
                "--shards {}: use 1 to 100000",
                a.shards
            )));
        }
        if a.threads == 0 || a.threads > 1024 {
            return Err(Error::msg(format!(
                "--threads {}: use 1 to 1024",
                a.threads
            )));
        }
        if !valid_time(&a.time) {
            return Err(Error::msg(format!(
                "--time `{}`: expected HH:MM:SS or D-HH:MM:SS",
                a.time
            )));
        }
        if !valid_mem(&a.mem) {
            return Err(Error::msg(format!(
                "--mem `{}`: expected e.g. 2G or 500M",
                a.mem
            )));
        }
        for (flag, v) in [("--partition", &a.partition), ("--account", &a.account)] {
            if let Some(v) = v {
                check_shell_safe(flag, v, true)?;
                if !v
                    .chars()
                    .all(|c| c.is_ascii_alphanumeric() || "._-,".contains(c))
                {
                    return Err(Error::msg(format!(
                        "{flag} {v:?}: a Slurm name is letters, digits, '.', '_', '-' (',' between \
                         several)"
                    )));
                }
            }
        }
        if let Some(n) = a.members {
            super::ensemble::check_members(n as usize)?;
        }
        let (units, what) = match kind {
            Kind::Batch => (
                crate::ensemble::manifest::Manifest::load(&a.manifest)?
                    .sites
                    .len(),
                "site",
            ),
            Kind::Grid => {
                if a.spec.is_some() || a.posterior.is_some() || a.members.is_some() {
                    return Err(Error::msg(format!(
                        "{} is a grid file: --spec, --posterior and --members apply to a batch \
                         manifest",
                        a.manifest.display()
                    )));
                }
                // Reads the grid's maps and time axes (not its weather) to count the blocks.
                let grid = crate::grid::Grid::load(&a.manifest, None, None)?;
                (grid.land.len().div_ceil(crate::grid::BLOCK_CELLS), "block")
            }
        };
        if a.shards as usize > units {
            let (file, nothing) = match kind {
                Kind::Batch => ("the manifest", "no site"),
                Kind::Grid => ("the grid", "no block"),
            };
            return Err(Error::msg(format!(
                "--shards {}: {file} has {}; use at most {units} shards (a shard with {nothing} \
                 would only queue an empty job)",
                a.shards,
                crate::output::plural(units as u64, what)
            )));
        }
        let isodisc = match &a.isodisc {
            Some(p) => absolute(p)?,
            None => std::env::current_exe().context("cannot find the isodisc program's path")?,
        };
        let ensemble = match (a.spec.is_some() || a.posterior.is_some(), a.members) {
            (true, Some(members)) => Some(Ensemble {
                spec: a.spec.as_deref().map(absolute).transpose()?,
                posterior: a.posterior.as_deref().map(absolute).transpose()?,
                members,
                seed: a.seed,
            }),
            (false, None) => None,
            _ => {
                return Err(Error::msg(
                    "--members goes with --spec or --posterior (or both), and they with it",
                ));
            }
        };
        let mut inputs = vec![a.manifest.clone()];
        inputs.extend(a.spec.clone());
        inputs.extend(a.posterior.clone());
        crate::output::check_not_input("--out", &a.out, &inputs)?;
        let manifest = absolute(&a.manifest)?;
        let results = absolute(&a.results)?;
        check_shell_safe("manifest", &manifest.display().to_string(), false)?;
        check_shell_safe("--results", &results.display().to_string(), true)?;
        check_shell_safe("--isodisc", &isodisc.display().to_string(), false)?;
        check_shell_safe("--out", &a.out.display().to_string(), false)?;
        if let Some(e) = &ensemble {
            if let Some(spec) = &e.spec {
                check_shell_safe("--spec", &spec.display().to_string(), false)?;
            }
            if let Some(fits) = &e.posterior {
                check_shell_safe("--posterior", &fits.display().to_string(), false)?;
            }
        }
        Ok(Self {
            kind,
            manifest,
            results,
            isodisc,
            shards: a.shards,
            threads: a.threads,
            time: a.time.clone(),
            mem: a.mem.clone(),
            partition: a.partition.clone(),
            account: a.account.clone(),
            ensemble,
            out: a.out.clone(),
        })
    }

    /// The script's text.
    pub fn script(&self) -> String {
        let q = |p: &Path| shell_quote(&p.display().to_string());
        let mut s = String::new();
        let _ = writeln!(s, "#!/usr/bin/env bash");
        let (what, of, done, input, name) = match self.kind {
            Kind::Batch => ("batch", "manifest", "sites", "MANIFEST", "batch"),
            Kind::Grid => ("grid", "grid file's cells", "blocks", "GRID", "grid"),
        };
        let _ = writeln!(
            s,
            "# Runs an isodisc {what} on a Slurm cluster: an array job of {} tasks, one per shard of the\n\
             # {of}, then a merge job that starts only if every task succeeded. Written by\n\
             # isodisc {} (`isodisc cluster-script`). Read it, adjust the resources, then submit with\n\
             #     bash {}\n\
             # It submits two jobs and returns at once; `squeue -u $USER` shows them. A shard that\n\
             # fails can be re-run alone (`sbatch --array=K ...`): finished {done} are skipped.",
            self.shards,
            env!("CARGO_PKG_VERSION"),
            self.out.display()
        );
        let _ = writeln!(s, "set -euo pipefail\n");
        let _ = writeln!(s, "ISODISC={}", q(&self.isodisc));
        let _ = writeln!(s, "{input}={}", q(&self.manifest));
        let _ = writeln!(
            s,
            "RESULTS={}        # shards in $RESULTS/shards, merged output in $RESULTS/merged",
            q(&self.results)
        );
        let _ = writeln!(s, "SHARDS={}", self.shards);
        let _ = writeln!(
            s,
            "THREADS={}             # threads per task (--cpus-per-task)",
            self.threads
        );
        let _ = writeln!(
            s,
            "TIME={}        # wall-time limit per task",
            shell_quote(&self.time)
        );
        let _ = writeln!(
            s,
            "MEM={}              # memory per task",
            shell_quote(&self.mem)
        );
        let mut extra = String::new();
        if let Some(p) = &self.partition {
            let _ = write!(extra, "\n#SBATCH --partition={p}");
        }
        if let Some(acc) = &self.account {
            let _ = write!(extra, "\n#SBATCH --account={acc}");
        }
        let mut ensemble = String::new();
        if let Some(e) = &self.ensemble {
            if let Some(spec) = &e.spec {
                let _ = write!(ensemble, " --spec {}", q(spec));
            }
            if let Some(fits) = &e.posterior {
                let _ = write!(ensemble, " --posterior {}", q(fits));
            }
            let _ = write!(ensemble, " --members {} --seed {}", e.members, e.seed);
        }
        let (units, command) = match self.kind {
            Kind::Batch => ("the sites", "batch \"$MANIFEST\""),
            Kind::Grid => ("the blocks of cells", "grid \"$GRID\""),
        };
        let _ = writeln!(
            s,
            "\nmkdir -p \"$RESULTS/logs\" \"$RESULTS/shards\"\n\n\
             # Task K (1..SHARDS) runs {units} whose index mod SHARDS = K - 1; `--shard env` reads K and\n\
             # SHARDS from SLURM_ARRAY_TASK_ID and SLURM_ARRAY_TASK_COUNT.\n\
             array_job=$(sbatch --parsable <<EOF\n\
             #!/usr/bin/env bash\n\
             #SBATCH --job-name=isodisc-{name}\n\
             #SBATCH --array=1-$SHARDS\n\
             #SBATCH --cpus-per-task=$THREADS\n\
             #SBATCH --mem=$MEM\n\
             #SBATCH --time=$TIME\n\
             #SBATCH --output=$RESULTS/logs/shard_%a.out{extra}\n\
             set -euo pipefail\n\
             \"$ISODISC\" {command} --out \"$RESULTS/shards/shard_\\${{SLURM_ARRAY_TASK_ID}}\" --shard env --threads $THREADS --quiet{ensemble}\n\
             EOF\n\
             )\n\
             array_job=${{array_job%%;*}}\n\n\
             # The merge refuses overlapping or missing shards, so it only succeeds on a complete batch.\n\
             merge_job=$(sbatch --parsable --dependency=afterok:$array_job <<EOF\n\
             #!/usr/bin/env bash\n\
             #SBATCH --job-name=isodisc-merge\n\
             #SBATCH --cpus-per-task=1\n\
             #SBATCH --mem=$MEM\n\
             #SBATCH --time=$TIME\n\
             #SBATCH --output=$RESULTS/logs/merge.out{extra}\n\
             set -euo pipefail\n\
             \"$ISODISC\" merge \"$RESULTS\"/shards/shard_* --out \"$RESULTS/merged\" --overwrite\n\
             EOF\n\
             )\n\
             merge_job=${{merge_job%%;*}}\n\n\
             echo \"submitted array job $array_job ($SHARDS tasks) and merge job $merge_job\"\n\
             echo \"merged priors will be in $RESULTS/merged\""
        );
        s
    }

    /// Writes the script (atomically, executable).
    pub fn run(&self) -> Result<()> {
        write_atomic(&self.out, self.script().as_bytes())?;
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            std::fs::set_permissions(&self.out, std::fs::Permissions::from_mode(0o755))
                .with_context(|| format!("cannot make {} executable", self.out.display()))?;
        }
        println!(
            "wrote {}: submit with `bash {}`",
            self.out.display(),
            self.out.display()
        );
        Ok(())
    }
}

/// Quotes a word for bash with single quotes.
fn shell_quote(s: &str) -> String {
    if !s.is_empty()
        && s.bytes()
            .all(|b| b.is_ascii_alphanumeric() || b"/._-:+=,".contains(&b))
    {
        s.to_string()
    } else {
        format!("'{}'", s.replace('\'', "'\\''"))
    }
}
