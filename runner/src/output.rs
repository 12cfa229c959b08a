//! Writing results: files appear whole or not at all (written to a temporary file beside the target,
//! then renamed), and numbers are formatted the same way everywhere.

use std::fs::{self, File};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

use crate::error::{Context, Error, Result};

/// A writer that names its file in every error (a full disk says which file it was writing).
pub struct NamedWriter {
    inner: BufWriter<File>,
    path: PathBuf,
}

impl NamedWriter {
    fn wrap(&self, e: std::io::Error) -> std::io::Error {
        std::io::Error::new(
            e.kind(),
            format!("cannot write {}: {e}", self.path.display()),
        )
    }
}

impl Write for NamedWriter {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.inner.write(buf).map_err(|e| self.wrap(e))
    }
    fn write_all(&mut self, buf: &[u8]) -> std::io::Result<()> {
        self.inner.write_all(buf).map_err(|e| self.wrap(e))
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush().map_err(|e| self.wrap(e))
    }
}

/// A file being written: a temporary file in the target's folder until [`AtomicFile::commit`]
/// renames it into place. Dropped without commit (or on Ctrl-C, see [`install_interrupt_handler`]),
/// the temporary file is removed.
pub struct AtomicFile {
    tmp: PathBuf,
    target: PathBuf,
    writer: Option<NamedWriter>,
}

impl AtomicFile {
    /// Starts writing `target` (through `.NAME.tmp-<pid>` beside it). Temporary files of dead
    /// processes beside `target` are removed first.
    pub fn create(target: &Path) -> Result<Self> {
        clean_stale(target);
        let tmp = sibling(target, "tmp");
        track(Pending::Temp(tmp.clone()));
        let file = match File::create(&tmp) {
            Ok(f) => f,
            Err(e) => {
                untrack(&tmp);
                return Err(Error::msg(format!(
                    "cannot create a temporary file {}: {e}",
                    tmp.display()
                )));
            }
        };
        Ok(Self {
            tmp,
            target: target.to_path_buf(),
            writer: Some(NamedWriter {
                inner: BufWriter::with_capacity(1 << 16, file),
                path: target.to_path_buf(),
            }),
        })
    }

    /// The buffered writer; its errors name the target file.
    pub fn writer(&mut self) -> &mut NamedWriter {
        self.writer.as_mut().expect("writer present until commit")
    }

    /// Flushes, syncs and renames the temporary file onto the target.
    pub fn commit(mut self) -> Result<()> {
        let w = self.writer.take().expect("writer present until commit");
        let result = (|| -> Result<()> {
            let file = w
                .inner
                .into_inner()
                .map_err(|e| e.into_error())
                .with_context(|| format!("cannot write {}", self.target.display()))?;
            file.sync_all()
                .with_context(|| format!("cannot write {}", self.target.display()))?;
            fs::rename(&self.tmp, &self.target)
                .with_context(|| format!("cannot move the result into {}", self.target.display()))
        })();
        if result.is_err() {
            let _ = fs::remove_file(&self.tmp);
        }
        untrack(&self.tmp);
        result
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if self.writer.is_some() {
            self.writer = None;
            let _ = fs::remove_file(&self.tmp);
            untrack(&self.tmp);
        }
    }
}

/// Writes `contents` to `target` atomically.
pub fn write_atomic(target: &Path, contents: &[u8]) -> Result<()> {
    let mut f = AtomicFile::create(target)?;
    f.writer().write_all(contents)?;
    f.commit()
}

/// Writes `value` as pretty JSON (with a final newline) to `path`, atomically.
pub fn write_json(path: &Path, value: &serde_json::Value) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    serde_json::to_writer_pretty(f.writer(), value)
        .with_context(|| format!("cannot write {}", path.display()))?;
    writeln!(f.writer())?;
    f.commit()
}

/// `1 day`, `2 days`, `3 entries`: a count with its noun in the right number.
pub fn plural(n: impl Into<u128>, noun: &str) -> String {
    let n = n.into();
    if n == 1 {
        format!("1 {noun}")
    } else if let Some(stem) = noun.strip_suffix('y')
        && !noun.ends_with("ay")
    {
        format!("{n} {stem}ies")
    } else {
        format!("{n} {noun}s")
    }
}

/// The path and FNV-1a checksum of each input file, keyed by role, for run logs and markers.
pub fn inputs_json(files: &[(&str, PathBuf)]) -> Result<serde_json::Value> {
    let mut map = serde_json::Map::new();
    for (role, path) in files {
        let bytes = fs::read(path).with_context(|| format!("cannot read {}", path.display()))?;
        map.insert(
            (*role).to_string(),
            serde_json::json!({"path": path.display().to_string(), "fnv1a64": fnv1a64(&bytes)}),
        );
    }
    Ok(map.into())
}

/// Formats a number for CSV: empty when NaN (a missing value, never a made-up number), otherwise
/// rounded to six decimals with trailing zeros dropped (finer than any input or output here needs:
/// µmol, ‰, gC m⁻²). Written digit by digit ([`crate::numfmt`]) because million-row outputs spend
/// most of their time here; values of 9·10⁹ and more are written in full by `Display`.
pub fn fmt_num(buf: &mut String, value: f64) {
    use std::fmt::Write as _;
    match crate::numfmt::micro_text(value) {
        Some(t) => buf.push_str(t.as_str()),
        None if value.is_nan() => {}
        None => {
            let _ = write!(buf, "{value}");
        }
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

/// A hidden sibling of `path` for temporary or old contents: `.NAME.TAG-PID`.
pub fn sibling(path: &Path, tag: &str) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    path.with_file_name(format!(".{name}.{tag}-{}", std::process::id()))
}

/// Something half-done on disk that an interruption must not leave behind.
#[derive(Debug, Clone, PartialEq)]
enum Pending {
    /// A temporary file or folder: removed.
    Temp(PathBuf),
    /// `out` moved aside to `old` while its replacement goes in: put back when `out` is absent.
    Aside { old: PathBuf, out: PathBuf },
}

static PENDING: Mutex<Vec<Pending>> = Mutex::new(Vec::new());

fn pending() -> std::sync::MutexGuard<'static, Vec<Pending>> {
    PENDING
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

fn track(p: Pending) {
    pending().push(p);
}

/// Registers a temporary file or folder for removal on Ctrl-C/SIGTERM (see [`undo_pending`]).
pub fn track_temp(path: &Path) {
    track(Pending::Temp(path.to_path_buf()));
}

/// Forgets a temporary path registered by [`track_temp`] (it was moved in or removed).
pub fn untrack(path: &Path) {
    pending().retain(|p| match p {
        Pending::Temp(t) => t != path,
        Pending::Aside { old, .. } => old != path,
    });
}

fn remove_path(p: &Path) {
    if p.is_dir() {
        let _ = fs::remove_dir_all(p);
    } else {
        let _ = fs::remove_file(p);
    }
}

/// Removes every temporary file and folder this process has open and puts back any folder moved
/// aside; returns how many it undid. Called by the Ctrl-C/SIGTERM handler.
pub fn undo_pending() -> usize {
    undo_pending_in(Path::new(""))
}

/// [`undo_pending`] for the paths under `dir` only (all of them when `dir` is empty).
pub fn undo_pending_in(dir: &Path) -> usize {
    let items: Vec<Pending> = {
        let mut all = pending();
        let (mine, rest): (Vec<Pending>, Vec<Pending>) = all.drain(..).partition(|p| match p {
            Pending::Temp(t) => t.starts_with(dir),
            Pending::Aside { old, .. } => old.starts_with(dir),
        });
        *all = rest;
        mine
    };
    for p in &items {
        match p {
            Pending::Temp(t) => remove_path(t),
            Pending::Aside { old, out } => {
                if out.exists() {
                    remove_path(old);
                } else {
                    let _ = fs::rename(old, out);
                }
            }
        }
    }
    items.len()
}

/// Installs a handler for Ctrl-C (SIGINT), SIGTERM and SIGHUP that removes this process's
/// temporary files and folders (see [`undo_pending`]) and exits with status 130.
pub fn install_interrupt_handler() {
    let _ = ctrlc::set_handler(|| {
        undo_pending();
        eprintln!(
            "isodisc: interrupted; temporary files removed, earlier results left as they were"
        );
        std::process::exit(130);
    });
}

/// True when process `pid` may still be running (Linux: `/proc/PID` exists). Elsewhere every
/// process counts as running, so nothing is cleaned that might be in use.
fn process_alive(pid: u32) -> bool {
    if pid == std::process::id() {
        return true;
    }
    let proc = Path::new("/proc");
    if !proc.join("self").exists() {
        return true;
    }
    proc.join(pid.to_string()).exists()
}

/// Cleans what a killed isodisc left beside `target`: its `.NAME.old-PID` sibling is moved back
/// when `target` is absent (the kill came between moving the old results aside and moving the
/// new ones in), then every `.NAME.tmp-PID` and `.NAME.old-PID` of a process no longer running is
/// removed. Returns what it did, one line each (also printed to standard error).
pub fn clean_stale(target: &Path) -> Vec<String> {
    let Some(name) = target.file_name().map(|n| n.to_string_lossy().into_owned()) else {
        return Vec::new();
    };
    let parent = match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let Ok(entries) = fs::read_dir(&parent) else {
        return Vec::new();
    };
    let mut stale: Vec<(PathBuf, bool)> = Vec::new();
    for e in entries.flatten() {
        let file = e.file_name().to_string_lossy().into_owned();
        for (tag, old) in [("tmp", false), ("old", true)] {
            let Some(pid) = file.strip_prefix(&format!(".{name}.{tag}-")) else {
                continue;
            };
            if let Ok(pid) = pid.parse::<u32>()
                && !process_alive(pid)
            {
                stale.push((e.path(), old));
            }
        }
    }
    let mut done = Vec::new();
    for (path, old) in stale {
        if old && !target.exists() && fs::rename(&path, target).is_ok() {
            done.push(format!(
                "restored {} from {} (left by an interrupted isodisc)",
                target.display(),
                path.display()
            ));
            continue;
        }
        remove_path(&path);
        done.push(format!(
            "removed {} (left by an interrupted isodisc)",
            path.display()
        ));
    }
    for line in &done {
        eprintln!("isodisc: {line}");
    }
    done
}

/// The file isodisc puts in every folder it writes; `--overwrite` replaces only folders that
/// carry it (or a `run.json`/`batch.json` of an older isodisc).
pub const MARKER: &str = ".isodisc-output";

/// Writes the marker of a folder of `kind` (`run`, `ensemble`, `batch`, `merge`, `figures`).
pub fn write_marker(dir: &Path, kind: &str) -> Result<()> {
    let v = serde_json::json!({
        "written_by": "isodisc",
        "isodisc_version": env!("CARGO_PKG_VERSION"),
        "kind": kind,
        "note": "isodisc may replace this folder with --overwrite; remove this file to protect it",
    });
    write_json(&dir.join(MARKER), &v)
}

/// True when `dir` was written by isodisc: it holds [`MARKER`], or a `run.json` or `batch.json`
/// with an `isodisc_version` (folders of isodisc before the marker).
pub fn written_by_isodisc(dir: &Path) -> bool {
    if dir.join(MARKER).is_file() {
        return true;
    }
    ["run.json", "batch.json", "done.json"].iter().any(|f| {
        fs::read_to_string(dir.join(f))
            .ok()
            .and_then(|t| serde_json::from_str::<serde_json::Value>(&t).ok())
            .is_some_and(|v| v.get("isodisc_version").is_some())
    })
}

/// `p` made absolute with every existing part resolved (links, `..`): the canonical form of its
/// longest existing ancestor with the rest appended.
pub fn resolved(p: &Path) -> PathBuf {
    let abs = std::path::absolute(p).unwrap_or_else(|_| p.to_path_buf());
    let mut tail: Vec<std::ffi::OsString> = Vec::new();
    let mut cur = abs.as_path();
    loop {
        if let Ok(c) = fs::canonicalize(cur) {
            let mut out = c;
            for t in tail.iter().rev() {
                if t == ".." {
                    out.pop();
                } else if t != "." {
                    out.push(t);
                }
            }
            return out;
        }
        match (cur.parent(), cur.file_name()) {
            (Some(parent), Some(name)) => {
                tail.push(name.to_os_string());
                cur = parent;
            }
            _ => return abs,
        }
    }
}

/// Refuses an output `out` (a folder, or a file) that is, contains or lies inside one of `inputs`
/// (the files and folders the command reads): replacing it would delete or mix up its own input.
pub fn check_not_input(flag: &str, out: &Path, inputs: &[PathBuf]) -> Result<()> {
    let o = resolved(out);
    for input in inputs {
        let i = resolved(input);
        let why = if i == o {
            "is"
        } else if i.starts_with(&o) {
            "contains"
        } else if o.starts_with(&i) {
            "lies inside"
        } else {
            continue;
        };
        return Err(Error::msg(format!(
            "{flag} {}: the output {why} the input {}; isodisc never writes over what it reads: \
             choose another place",
            out.display(),
            input.display()
        )));
    }
    Ok(())
}

/// Puts the finished folder `tmp` in place of `out`. An existing `out` is first moved aside and
/// removed only after the new one is in place; an interruption in between puts it back.
pub fn replace_dir(tmp: &Path, out: &Path, overwrite: bool) -> Result<()> {
    if out.exists() {
        if fs::read_dir(out)?.next().is_some() && !(overwrite && written_by_isodisc(out)) {
            return Err(Error::msg(format!(
                "{} appeared during the run; results left in {}",
                out.display(),
                tmp.display()
            )));
        }
        let old = sibling(out, "old");
        track(Pending::Aside {
            old: old.clone(),
            out: out.to_path_buf(),
        });
        let moved = fs::rename(out, &old)
            .with_context(|| format!("cannot move {} aside", out.display()))
            .and_then(|()| {
                fs::rename(tmp, out)
                    .with_context(|| format!("cannot move the results into {}", out.display()))
            });
        if let Err(e) = moved {
            if !out.exists() {
                let _ = fs::rename(&old, out);
            }
            untrack(&old);
            return Err(e);
        }
        untrack(&old);
        untrack(tmp);
        fs::remove_dir_all(&old).with_context(|| format!("cannot remove {}", old.display()))?;
    } else {
        if let Some(parent) = out.parent().filter(|p| !p.as_os_str().is_empty()) {
            fs::create_dir_all(parent)
                .with_context(|| format!("cannot create the folder {}", parent.display()))?;
        }
        fs::rename(tmp, out)
            .with_context(|| format!("cannot move the results into {}", out.display()))?;
        untrack(tmp);
    }
    Ok(())
}

/// The checks every output folder gets: not one of the `inputs`, leftovers of killed runs beside
/// it cleaned, not a file. True when the folder exists.
fn prepare_out_dir(out: &Path, inputs: &[PathBuf]) -> Result<bool> {
    check_not_input("--out", out, inputs)?;
    clean_stale(out);
    if out.exists() && !out.is_dir() {
        return Err(Error::msg(format!(
            "--out {}: exists and is not a folder",
            out.display()
        )));
    }
    Ok(out.exists())
}

/// Checks an output folder before any work: not one of the `inputs` (see [`check_not_input`]), not
/// a file, and either absent, empty, or — with `overwrite` — a folder isodisc wrote (see
/// [`written_by_isodisc`]). What an interrupted earlier run left beside it is cleaned first (see
/// [`clean_stale`]).
pub fn check_out_dir(out: &Path, overwrite: bool, inputs: &[PathBuf]) -> Result<()> {
    if prepare_out_dir(out, inputs)? {
        let empty = fs::read_dir(out)
            .with_context(|| format!("cannot read the folder {}", out.display()))?
            .next()
            .is_none();
        if !empty && !overwrite {
            return Err(Error::msg(format!(
                "--out {}: the folder exists and is not empty; pass --overwrite to replace it",
                out.display()
            )));
        }
        if !empty && !written_by_isodisc(out) {
            return Err(Error::msg(format!(
                "--out {}: the folder holds files isodisc did not write (no {MARKER}, run.json or \
                 batch.json of isodisc); --overwrite replaces only isodisc's own result folders: \
                 choose another folder or empty it yourself",
                out.display()
            )));
        }
    }
    Ok(())
}

/// Fills a temporary folder beside `out` with `fill`, marks it as isodisc's (`kind`), then puts it
/// in place of `out` — so `out` holds either its earlier contents or all of the new ones, never a
/// mix. On failure or interruption the temporary folder is removed and `out` is left as it was.
pub fn write_folder<T>(
    out: &Path,
    overwrite: bool,
    kind: &str,
    fill: impl FnOnce(&Path) -> Result<T>,
) -> Result<T> {
    let tmp = sibling(out, "tmp");
    if tmp.exists() {
        fs::remove_dir_all(&tmp)?;
    }
    track(Pending::Temp(tmp.clone()));
    let result = fs::create_dir_all(&tmp)
        .with_context(|| format!("cannot create the folder {}", tmp.display()))
        .and_then(|()| fill(&tmp))
        .and_then(|v| {
            write_marker(&tmp, kind)?;
            replace_dir(&tmp, out, overwrite)?;
            Ok(v)
        });
    if result.is_err() {
        let _ = fs::remove_dir_all(&tmp);
        untrack(&tmp);
    }
    result
}

/// Writes a folder of figures, all or nothing: `out` must not be or hold one of `inputs`; an
/// existing non-empty `out` is replaced only when isodisc wrote it (its marker, or only `.svg`
/// files as earlier isodisc wrote). `draw` writes into the temporary folder it is given.
pub fn write_figures<T>(
    out: &Path,
    inputs: &[PathBuf],
    draw: impl FnOnce(&Path) -> Result<T>,
) -> Result<T> {
    if prepare_out_dir(out, inputs)? {
        let only_svg = fs::read_dir(out)?
            .flatten()
            .all(|e| e.path().is_file() && e.path().extension().is_some_and(|x| x == "svg"));
        if !only_svg && !written_by_isodisc(out) {
            return Err(Error::msg(format!(
                "--out {}: the folder holds files isodisc did not write; figures go into a folder \
                 of their own: choose another --out",
                out.display()
            )));
        }
        if only_svg && !out.join(MARKER).exists() {
            // An older isodisc's figures: mark them so replace_dir takes them.
            write_marker(out, "figures")?;
        }
    }
    write_folder(out, true, "figures", draw)
}

/// An OS lock (`flock`) on `DIR/.isodisc-lock`, held while a batch writes into DIR and released
/// when the process ends however it ends, so a lock can never be left stale by a kill: a lock file
/// that nobody holds is simply taken over.
pub struct FolderLock {
    _file: File,
    /// True when a lock file of an earlier, ended process was found (and taken over).
    pub took_over: bool,
}

/// Name of the lock file of a batch folder.
pub const LOCK_FILE: &str = ".isodisc-lock";

impl FolderLock {
    /// Locks `dir` (created if absent) or says who holds it.
    pub fn acquire(dir: &Path) -> Result<Self> {
        fs::create_dir_all(dir)
            .with_context(|| format!("cannot create the folder {}", dir.display()))?;
        let path = dir.join(LOCK_FILE);
        let mut file = fs::OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(&path)
            .with_context(|| format!("cannot open the lock file {}", path.display()))?;
        match file.try_lock() {
            Ok(()) => {}
            Err(fs::TryLockError::WouldBlock) => {
                let holder = fs::read_to_string(&path).unwrap_or_default();
                let who = holder
                    .trim()
                    .strip_prefix("pid ")
                    .map_or_else(|| "another process".to_string(), |p| format!("process {p}"));
                return Err(Error::msg(format!(
                    "{} is in use by another isodisc batch ({who}); wait for it to finish, or use \
                     another --out",
                    dir.display()
                )));
            }
            Err(fs::TryLockError::Error(e)) => {
                return Err(Error::msg(format!("cannot lock {}: {e}", path.display())));
            }
        }
        let mut previous = String::new();
        use std::io::{Read, Seek};
        let _ = file.read_to_string(&mut previous);
        let took_over = !previous.trim().is_empty();
        file.set_len(0)?;
        file.seek(std::io::SeekFrom::Start(0))?;
        writeln!(file, "pid {}", std::process::id())
            .with_context(|| format!("cannot write {}", path.display()))?;
        file.sync_all()?;
        Ok(Self {
            _file: file,
            took_over,
        })
    }
}

impl Drop for FolderLock {
    fn drop(&mut self) {
        // Empty the file so the next batch does not take it for a stale lock; the OS lock goes
        // with the file handle.
        let _ = self._file.set_len(0);
    }
}

#[cfg(test)]
mod tests {
    use super::{NamedWriter, fmt_num, plural, resolved};
    use std::fs::{self, File};
    use std::io::{BufWriter, Write};

    #[test]
    fn write_errors_name_the_file() {
        // A file opened read-only refuses writes (EBADF), as a full disk refuses them (ENOSPC):
        // the error must say which file was being written (common practice).
        let dir = tempfile::tempdir().unwrap();
        let ro = dir.path().join("ro.txt");
        fs::write(&ro, "").unwrap();
        let mut w = NamedWriter {
            inner: BufWriter::with_capacity(4, File::open(&ro).unwrap()),
            path: dir.path().join("priors.csv"),
        };
        let e = w
            .write_all(b"0123456789")
            .and_then(|()| w.flush())
            .unwrap_err();
        assert!(e.to_string().contains("priors.csv"), "{e}");
    }

    #[test]
    fn counts_take_the_singular_for_one() {
        assert_eq!(plural(1u64, "day"), "1 day");
        assert_eq!(plural(0u64, "value"), "0 values");
        assert_eq!(plural(2u64, "site"), "2 sites");
    }

    #[test]
    fn resolved_paths_see_through_dot_dot_and_missing_parts() {
        let dir = tempfile::tempdir().unwrap();
        fs::create_dir(dir.path().join("a")).unwrap();
        let base = fs::canonicalize(dir.path()).unwrap();
        assert_eq!(resolved(&dir.path().join("a/../b/c")), base.join("b/c"));
        assert_eq!(resolved(&dir.path().join("a/./x")), base.join("a/x"));
    }

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
