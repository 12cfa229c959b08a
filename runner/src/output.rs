//! Writing results: files appear whole or not at all (written to a temporary file beside the target,
//! then renamed), and numbers are formatted the same way everywhere.

use std::fs::{self, File};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use crate::error::{Context, Error, Result};

/// A file being written: a temporary file in the target's folder until [`AtomicFile::commit`]
/// renames it into place. Dropped without commit, the temporary file is removed.
pub struct AtomicFile {
    tmp: PathBuf,
    target: PathBuf,
    writer: Option<BufWriter<File>>,
}

impl AtomicFile {
    /// Starts writing `target` (through `target` + `.tmp-<pid>`).
    pub fn create(target: &Path) -> Result<Self> {
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let tmp = target.with_file_name(format!(".{name}.tmp-{}", std::process::id()));
        let file = File::create(&tmp)
            .with_context(|| format!("cannot create a temporary file {}", tmp.display()))?;
        Ok(Self {
            tmp,
            target: target.to_path_buf(),
            writer: Some(BufWriter::with_capacity(1 << 16, file)),
        })
    }

    /// The buffered writer.
    pub fn writer(&mut self) -> &mut BufWriter<File> {
        self.writer.as_mut().expect("writer present until commit")
    }

    /// Flushes, syncs and renames the temporary file onto the target.
    pub fn commit(mut self) -> Result<()> {
        let w = self.writer.take().expect("writer present until commit");
        let file = w
            .into_inner()
            .map_err(|e| e.into_error())
            .with_context(|| format!("cannot write {}", self.target.display()))?;
        file.sync_all()
            .with_context(|| format!("cannot write {}", self.target.display()))?;
        fs::rename(&self.tmp, &self.target)
            .with_context(|| format!("cannot move the result into {}", self.target.display()))?;
        Ok(())
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if self.writer.is_some() {
            self.writer = None;
            let _ = fs::remove_file(&self.tmp);
        }
    }
}

/// Writes `contents` to `target` atomically.
pub fn write_atomic(target: &Path, contents: &[u8]) -> Result<()> {
    let mut f = AtomicFile::create(target)?;
    f.writer()
        .write_all(contents)
        .with_context(|| format!("cannot write {}", target.display()))?;
    f.commit()
}

/// Writes `value` as pretty JSON (with a final newline) to `path`, atomically.
pub fn write_json(path: &Path, value: &serde_json::Value) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    serde_json::to_writer_pretty(f.writer(), value)?;
    writeln!(f.writer())?;
    f.commit()
}

/// Formats a number for CSV: empty when NaN (a missing value, never a made-up number), otherwise
/// rounded to six decimals with trailing zeros dropped (finer than any input or output here needs:
/// µmol, ‰, gC m⁻²). Written digit by digit because million-row outputs spend most of their time
/// here.
pub fn fmt_num(buf: &mut String, value: f64) {
    use std::fmt::Write as _;
    if value.is_nan() {
        return;
    }
    if value.is_infinite() {
        buf.push_str(if value > 0.0 { "inf" } else { "-inf" });
        return;
    }
    let micro = (value * 1e6).round();
    if micro.abs() >= 9.0e15 {
        let _ = write!(buf, "{value}");
        return;
    }
    let micro = micro as i64;
    if micro < 0 {
        buf.push('-');
    }
    let m = micro.unsigned_abs();
    let _ = write!(buf, "{}", m / 1_000_000);
    let mut frac = m % 1_000_000;
    if frac != 0 {
        buf.push('.');
        let mut digits = 6;
        while frac.is_multiple_of(10) {
            frac /= 10;
            digits -= 1;
        }
        let _ = write!(buf, "{frac:0digits$}");
    }
}

/// A number for JSON: null when NaN or infinite.
pub fn json_num(value: f64) -> serde_json::Value {
    if value.is_finite() {
        serde_json::Value::from((value * 1e6).round() / 1e6)
    } else {
        serde_json::Value::Null
    }
}

/// FNV-1a 64-bit hash of the bytes, as 16 hex digits: a checksum to tell whether an input changed.
pub fn fnv1a64(bytes: &[u8]) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in bytes {
        h ^= u64::from(*b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

/// A hidden sibling of `dir` for temporary or old contents: `.NAME.TAG-PID`.
pub fn sibling(dir: &Path, tag: &str) -> PathBuf {
    let name = dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    dir.with_file_name(format!(".{name}.{tag}-{}", std::process::id()))
}

/// Puts the finished folder `tmp` in place of `out`. An existing `out` is first moved aside and
/// removed only after the new one is in place.
pub fn replace_dir(tmp: &Path, out: &Path, overwrite: bool) -> Result<()> {
    if out.exists() {
        if !overwrite && fs::read_dir(out)?.next().is_some() {
            return Err(Error::msg(format!(
                "{} appeared during the run; results left in {}",
                out.display(),
                tmp.display()
            )));
        }
        let old = sibling(out, "old");
        fs::rename(out, &old).with_context(|| format!("cannot move {} aside", out.display()))?;
        fs::rename(tmp, out)
            .with_context(|| format!("cannot move the results into {}", out.display()))?;
        fs::remove_dir_all(&old).with_context(|| format!("cannot remove {}", old.display()))?;
    } else {
        if let Some(parent) = out.parent().filter(|p| !p.as_os_str().is_empty()) {
            fs::create_dir_all(parent)?;
        }
        fs::rename(tmp, out)
            .with_context(|| format!("cannot move the results into {}", out.display()))?;
    }
    Ok(())
}

/// Refuses an `--out` that is a file, or a non-empty folder without `--overwrite`.
pub fn check_out_dir(out: &Path, overwrite: bool) -> Result<()> {
    if out.exists() {
        if !out.is_dir() {
            return Err(Error::msg(format!(
                "--out {}: exists and is not a folder",
                out.display()
            )));
        }
        if fs::read_dir(out)?.next().is_some() && !overwrite {
            return Err(Error::msg(format!(
                "--out {}: the folder exists and is not empty; pass --overwrite to replace it",
                out.display()
            )));
        }
    }
    Ok(())
}

/// Fills a temporary folder beside `out` with `fill`, then puts it in place of `out` — so `out`
/// holds either its earlier contents or all of the new ones, never a mix. On failure the temporary
/// folder is removed and `out` is left as it was.
pub fn write_folder<T>(
    out: &Path,
    overwrite: bool,
    fill: impl FnOnce(&Path) -> Result<T>,
) -> Result<T> {
    let tmp = sibling(out, "tmp");
    if tmp.exists() {
        fs::remove_dir_all(&tmp)?;
    }
    fs::create_dir_all(&tmp)
        .with_context(|| format!("cannot create the folder {}", tmp.display()))?;
    match fill(&tmp) {
        Ok(v) => {
            replace_dir(&tmp, out, overwrite)?;
            Ok(v)
        }
        Err(e) => {
            let _ = fs::remove_dir_all(&tmp);
            Err(e)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::fmt_num;

    #[test]
    fn numbers_round_to_six_decimals_and_drop_trailing_zeros() {
        let cases = [
            (0.1, "0.1"),
            (25.0, "25"),
            (-8.5, "-8.5"),
            (1e-7, "0"),
            (-1e-7, "0"),
            (15.2635449, "15.263545"),
            (-0.000001, "-0.000001"),
            (0.0123, "0.0123"),
            (f64::NAN, ""),
            (f64::INFINITY, "inf"),
            (1e20, "100000000000000000000"),
        ];
        for (v, want) in cases {
            let mut s = String::new();
            fmt_num(&mut s, v);
            assert_eq!(s, want, "{v}");
        }
    }
}
