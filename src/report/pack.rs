//! Writing an evidence pack safely (decision F.22 in docs/rules.md).
//!
//! The pack is built in a fresh temporary folder beside `--out` and moved
//! into place only when every file was written, so a full disk or a killed
//! run never leaves a half-written or mixed pack: the earlier pack stays
//! whole until the new one replaces it whole. A lock file beside `--out`
//! keeps two runs from writing the same folder. `--out` must not be or hold
//! any input, must not be a link, and must be empty or an earlier pack.

use anyhow::{bail, Context};
use std::fs::{self, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Marks a folder as a holdfast evidence pack.
pub const MARKER: &str = ".holdfast-pack";

/// Names an earlier pack may hold (packs written before the marker existed).
const PACK_NAMES: [&str; 14] = [
    MARKER,
    "shard.json",
    "results.json",
    "summary.csv",
    "report.html",
    "plots",
    "tests.csv",
    "index.html",
    "rules",
    "tests",
    "validation",
    "validation.json",
    "validation.csv",
    "validation.html",
];

/// A pack being written.
pub struct PackWriter {
    out: PathBuf,
    tmp: PathBuf,
    lock: PathBuf,
    committed: bool,
}

fn sibling(out: &Path, what: &str) -> PathBuf {
    let name = out
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "pack".into());
    out.with_file_name(format!(".{name}.holdfast-{what}"))
}

fn pid_alive(pid: u32) -> bool {
    // Where /proc is not there, a lock is never taken to be stale.
    let proc = Path::new("/proc");
    !proc.is_dir() || proc.join(pid.to_string()).exists()
}

/// The absolute, link-free form of a path that may not exist yet.
fn absolute(p: &Path) -> std::io::Result<PathBuf> {
    match fs::canonicalize(p) {
        Ok(c) => Ok(c),
        Err(_) => {
            let parent = p.parent().filter(|x| !x.as_os_str().is_empty());
            let base = match parent {
                Some(x) => fs::canonicalize(x)?,
                None => std::env::current_dir()?,
            };
            Ok(base.join(p.file_name().unwrap_or_default()))
        }
    }
}

impl PackWriter {
    /// Prepares writing a pack to `out`; `inputs` are every file the run reads.
    pub fn begin(out: &Path, inputs: &[PathBuf]) -> anyhow::Result<PackWriter> {
        if out.as_os_str().is_empty() || out.file_name().is_none() {
            bail!("--out '{}' names no folder", out.display());
        }
        if let Ok(m) = fs::symlink_metadata(out) {
            if m.file_type().is_symlink() {
                bail!(
                    "--out {} is a link; give the evidence pack a real folder (links are never followed)",
                    out.display()
                );
            }
            if !m.is_dir() {
                bail!(
                    "--out {} exists and is not a folder; choose another --out",
                    out.display()
                );
            }
        }
        if let Some(parent) = out.parent().filter(|p| !p.as_os_str().is_empty()) {
            fs::create_dir_all(parent).with_context(|| format!("creating {}", parent.display()))?;
        }
        let out_abs = absolute(out).with_context(|| format!("resolving {}", out.display()))?;
        for input in inputs {
            if let Ok(i) = fs::canonicalize(input) {
                if i == out_abs || i.starts_with(&out_abs) {
                    bail!(
                        "--out {} holds the input {}: writing the evidence pack there could overwrite it; choose another --out",
                        out.display(),
                        input.display()
                    );
                }
            }
        }
        if out.is_dir() {
            let entries: Vec<String> = fs::read_dir(out)
                .with_context(|| format!("reading {}", out.display()))?
                .filter_map(|e| e.ok())
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect();
            let marked = entries.iter().any(|e| e == MARKER);
            let foreign: Vec<&String> = entries
                .iter()
                .filter(|e| !PACK_NAMES.contains(&e.as_str()))
                .collect();
            if !marked && !foreign.is_empty() {
                bail!(
                    "--out {} is not an evidence pack (it holds {}); holdfast replaces a pack folder whole, so give an empty or new folder",
                    out.display(),
                    foreign
                        .iter()
                        .take(3)
                        .map(|s| crate::text::excerpt(s, 40))
                        .collect::<Vec<_>>()
                        .join(", ")
                );
            }
        }
        let lock = sibling(out, "lock");
        Self::take_lock(&lock, out)?;
        let mut w = PackWriter {
            out: out.to_path_buf(),
            tmp: PathBuf::new(),
            lock,
            committed: false,
        };
        w.clean_stale();
        let stamp = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0);
        w.tmp = sibling(out, &format!("tmp-{}-{stamp}", std::process::id()));
        fs::create_dir(&w.tmp).with_context(|| format!("creating {}", w.tmp.display()))?;
        w.file(MARKER, b"holdfast evidence pack\n")?;
        Ok(w)
    }

    fn take_lock(lock: &Path, out: &Path) -> anyhow::Result<()> {
        for _ in 0..2 {
            match OpenOptions::new().write(true).create_new(true).open(lock) {
                Ok(mut f) => {
                    writeln!(f, "{}", std::process::id())?;
                    return Ok(());
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                    let holder = fs::read_to_string(lock)
                        .ok()
                        .and_then(|s| s.trim().parse::<u32>().ok());
                    match holder {
                        Some(pid) if pid_alive(pid) => bail!(
                            "another holdfast run (process {pid}) is writing {}; wait for it, or remove {} if no run is active",
                            out.display(),
                            lock.display()
                        ),
                        // A run that was killed: its lock is stale.
                        _ => {
                            let _ = fs::remove_file(lock);
                        }
                    }
                }
                Err(e) => {
                    return Err(e).with_context(|| format!("creating {}", lock.display()));
                }
            }
        }
        bail!("cannot take the lock {}", lock.display())
    }

    /// Removes temporary folders of killed runs into the same `--out`.
    fn clean_stale(&self) {
        let (Some(parent), Some(name)) = (
            self.out.parent().map(|p| {
                if p.as_os_str().is_empty() {
                    Path::new(".")
                } else {
                    p
                }
            }),
            self.out.file_name(),
        ) else {
            return;
        };
        let prefix = format!(".{}.holdfast-", name.to_string_lossy());
        let Ok(rd) = fs::read_dir(parent) else { return };
        for e in rd.filter_map(|e| e.ok()) {
            let n = e.file_name().to_string_lossy().into_owned();
            let Some(rest) = n.strip_prefix(&prefix) else {
                continue;
            };
            let pid = rest
                .strip_prefix("tmp-")
                .or_else(|| rest.strip_prefix("old-"))
                .and_then(|r| r.split('-').next())
                .and_then(|p| p.parse::<u32>().ok());
            if let Some(pid) = pid {
                if !pid_alive(pid) || pid == std::process::id() {
                    // remove_dir_all does not follow links inside.
                    let _ = fs::remove_dir_all(e.path());
                }
            }
        }
    }

    /// The folder being filled (figures go to `dir()/plots`).
    pub fn dir(&self) -> &Path {
        &self.tmp
    }

    /// Creates a sub-folder of the pack.
    pub fn subdir(&self, rel: &str) -> anyhow::Result<PathBuf> {
        let p = self.tmp.join(rel);
        fs::create_dir_all(&p).with_context(|| format!("creating {}", p.display()))?;
        Ok(p)
    }

    /// Writes a new file into the pack (never over an existing one) and
    /// syncs it to disk.
    pub fn file(&self, rel: &str, bytes: &[u8]) -> anyhow::Result<()> {
        self.write_new(rel, bytes, true)
    }

    /// Like [`PackWriter::file`] without the sync, for the many small
    /// files (a page per test, like the figures): syncing each costs more
    /// than writing it, and a killed run leaves no pack either way (the
    /// folder is moved into place only when complete).
    pub fn file_unsynced(&self, rel: &str, bytes: &[u8]) -> anyhow::Result<()> {
        self.write_new(rel, bytes, false)
    }

    fn write_new(&self, rel: &str, bytes: &[u8], sync: bool) -> anyhow::Result<()> {
        let p = self.tmp.join(rel);
        let mut f = OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&p)
            .with_context(|| format!("creating {}", p.display()))?;
        f.write_all(bytes)
            .and_then(|_| if sync { f.sync_all() } else { Ok(()) })
            .with_context(|| format!("writing {}", p.display()))?;
        Ok(())
    }

    /// Creates a new file in the pack to be written piece by piece.
    pub fn create(&self, rel: &str) -> anyhow::Result<PackFile> {
        let path = self.tmp.join(rel);
        let f = OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&path)
            .with_context(|| format!("creating {}", path.display()))?;
        Ok(PackFile {
            out: std::io::BufWriter::new(f),
            path,
        })
    }

    /// Moves the complete pack into place, replacing an earlier one whole.
    pub fn commit(mut self) -> anyhow::Result<()> {
        let old = sibling(&self.out, &format!("old-{}", std::process::id()));
        let had = self.out.is_dir();
        if had {
            fs::rename(&self.out, &old)
                .with_context(|| format!("moving the earlier pack {} aside", self.out.display()))?;
        }
        if let Err(e) = fs::rename(&self.tmp, &self.out) {
            if had {
                let _ = fs::rename(&old, &self.out);
            }
            return Err(e).with_context(|| format!("moving the pack into {}", self.out.display()));
        }
        self.committed = true;
        if had {
            let _ = fs::remove_dir_all(&old);
        }
        Ok(())
    }
}

impl Drop for PackWriter {
    fn drop(&mut self) {
        if !self.committed && !self.tmp.as_os_str().is_empty() {
            let _ = fs::remove_dir_all(&self.tmp);
        }
        let _ = fs::remove_file(&self.lock);
    }
}

/// A pack file written piece by piece ([`PackWriter::create`]).
pub struct PackFile {
    out: std::io::BufWriter<fs::File>,
    path: PathBuf,
}

impl Write for PackFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.out.write(buf)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.out.flush()
    }
}

impl PackFile {
    /// Flushes and syncs the file; a write error names it.
    pub fn finish(self) -> anyhow::Result<()> {
        let path = self.path;
        let f = self
            .out
            .into_inner()
            .map_err(|e| e.into_error())
            .with_context(|| format!("writing {}", path.display()))?;
        f.sync_all()
            .with_context(|| format!("writing {}", path.display()))
    }
}
