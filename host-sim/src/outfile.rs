//! Output files that a failed run cannot destroy.
//!
//! Every file `humsim` writes (`--out`, `--plot`, `simulate -o` and its
//! labels) goes through [`OutputFile`]:
//!
//! - **Checked before the run.** [`OutputFile::create`] is called before any
//!   long work starts: it refuses a directory, a plot name without `.png`,
//!   and (with [`check_distinct`]) an output that is one of the run's inputs
//!   (the same path after symbolic links, or the same device and inode: a
//!   hard link) or another output of the same run. Creating the temporary
//!   file proves the directory is writable.
//! - **Written beside, renamed into place.** For a regular file (or a name
//!   that does not exist yet) the run writes `.humsim-<pid>-<n>-<name>` in
//!   the target's own directory (after symbolic links, so a link is written
//!   through, not replaced) and [`OutputFile::commit`] flushes it to disk and
//!   renames it over the target, which is atomic on one file system. Until
//!   then the old file is untouched; a run that fails, or an `OutputFile`
//!   dropped without a commit, removes only its own temporary file. An
//!   existing file's permissions are carried over to the new one.
//! - **Written directly** when the target exists and is not a regular file
//!   (`/dev/null`, a terminal, a pipe): there is nothing to keep, and such a
//!   target is never renamed over or removed.
//!
//! Nothing here deletes a file the run did not create.

use std::fs::{File, OpenOptions};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU32, Ordering};

/// Distinguishes the temporary files of one process.
static SERIAL: AtomicU32 = AtomicU32::new(0);

/// Where an output's bytes go until it is committed.
#[derive(Debug)]
enum Target {
    /// A temporary file beside `target`, renamed over it on commit.
    Replace { tmp: PathBuf },
    /// The target itself (not a regular file): written as the run goes.
    Direct,
}

/// One output file of a run (see the module docs).
#[derive(Debug)]
pub struct OutputFile {
    shown: String,
    target: PathBuf,
    how: Target,
    writer: Option<BufWriter<File>>,
    committed: bool,
}

/// What an output holds, for the checks made before the run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// Any bytes (CSV, TOML, WAV).
    Data,
    /// A PNG picture: the name must end in `.png` (so that what is written
    /// is what the name says).
    Png,
}

/// Identity of a file for the same-file checks: its path after symbolic
/// links and, on Unix, its device and inode.
#[derive(Debug, Clone, PartialEq, Eq)]
struct Identity {
    path: PathBuf,
    node: Option<(u64, u64)>,
}

fn identity(path: &Path) -> Option<Identity> {
    let meta = std::fs::metadata(path).ok()?;
    let path = std::fs::canonicalize(path).ok()?;
    #[cfg(unix)]
    let node = {
        use std::os::unix::fs::MetadataExt;
        Some((meta.dev(), meta.ino()))
    };
    #[cfg(not(unix))]
    let node = {
        let _ = meta;
        None
    };
    Some(Identity { path, node })
}

fn same(a: &Identity, b: &Identity) -> bool {
    a.path == b.path || (a.node.is_some() && a.node == b.node)
}

/// The path an output will end up at: symbolic links followed (a dangling
/// link's own target), the directory made absolute where it exists.
fn resolve(path: &Path) -> PathBuf {
    if let Ok(p) = std::fs::canonicalize(path) {
        return p;
    }
    if let Ok(link) = std::fs::read_link(path) {
        let joined = match path.parent() {
            Some(dir) if link.is_relative() => dir.join(link),
            _ => link,
        };
        return resolve_parent(&joined);
    }
    resolve_parent(path)
}

fn resolve_parent(path: &Path) -> PathBuf {
    let (Some(dir), Some(name)) = (path.parent(), path.file_name()) else {
        return path.to_path_buf();
    };
    let dir = if dir.as_os_str().is_empty() {
        Path::new(".")
    } else {
        dir
    };
    match std::fs::canonicalize(dir) {
        Ok(d) => d.join(name),
        Err(_) => path.to_path_buf(),
    }
}

/// Refuses a run whose outputs include one of its inputs, or name one file
/// twice. `inputs` and `outputs` are `(what, path)` pairs, `what` as the
/// user gave it (`--out`, `--labels`, …), used in the message.
pub fn check_distinct(inputs: &[(&str, &Path)], outputs: &[(&str, &Path)]) -> Result<(), String> {
    let ins: Vec<(&str, &Path, Identity)> = inputs
        .iter()
        .filter_map(|&(what, p)| identity(p).map(|id| (what, p, id)))
        .collect();
    for (k, &(what, out)) in outputs.iter().enumerate() {
        if let Some(id) = identity(out) {
            if let Some((iwhat, ip, _)) = ins.iter().find(|(_, _, i)| same(i, &id)) {
                return Err(format!(
                    "{what} {}: is the same file as the input {iwhat} {}; refusing to overwrite \
                     an input (choose another output name)",
                    out.display(),
                    ip.display()
                ));
            }
        }
        let here = resolve(out);
        for &(owhat, other) in outputs.iter().take(k) {
            if resolve(other) == here {
                return Err(format!(
                    "{what} {}: is also the {owhat} output of this run; give each output its own \
                     file",
                    out.display()
                ));
            }
        }
    }
    Ok(())
}

impl OutputFile {
    /// Checks `path` and opens the place the run will write to (see the
    /// module docs). `what` names the option in messages (`--out`).
    pub fn create(what: &str, path: &Path, kind: Kind) -> Result<OutputFile, String> {
        let shown = format!("{what} {}", path.display());
        if path.as_os_str().is_empty() {
            return Err(format!("{what}: an empty file name"));
        }
        if kind == Kind::Png
            && !path
                .extension()
                .is_some_and(|e| e.eq_ignore_ascii_case("png"))
        {
            return Err(format!(
                "{shown}: a plot is written as PNG; give a file name ending in .png"
            ));
        }
        let target = resolve(path);
        let meta = std::fs::metadata(&target).ok();
        if meta.as_ref().is_some_and(std::fs::Metadata::is_dir) {
            return Err(format!("{shown}: is a directory; give a file name"));
        }
        if meta.as_ref().is_some_and(|m| !m.is_file()) {
            let file = OpenOptions::new()
                .write(true)
                .open(&target)
                .map_err(|e| format!("{shown}: cannot write: {e}"))?;
            return Ok(OutputFile {
                shown,
                target,
                how: Target::Direct,
                writer: Some(BufWriter::with_capacity(1 << 16, file)),
                committed: false,
            });
        }
        let dir = match target.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        if !dir.is_dir() {
            return Err(format!(
                "{shown}: cannot write: the directory {} does not exist",
                dir.display()
            ));
        }
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let serial = SERIAL.fetch_add(1, Ordering::Relaxed);
        let tmp = dir.join(format!(".humsim-{}-{serial}-{name}", std::process::id()));
        let file = OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
            .map_err(|e| {
                format!(
                    "{shown}: cannot write in the directory {}: {e}",
                    dir.display()
                )
            })?;
        if let Some(m) = &meta {
            // Best effort: the new file keeps the old one's permissions.
            let _ = file.set_permissions(m.permissions());
        }
        Ok(OutputFile {
            shown,
            target,
            how: Target::Replace { tmp },
            writer: Some(BufWriter::with_capacity(1 << 16, file)),
            committed: false,
        })
    }

    /// The option and path, for messages (`--out events.csv`).
    pub fn shown(&self) -> &str {
        &self.shown
    }

    /// The buffered writer for the output's bytes.
    pub fn writer(&mut self) -> Result<&mut BufWriter<File>, String> {
        let shown = &self.shown;
        self.writer
            .as_mut()
            .ok_or_else(|| format!("{shown}: already closed"))
    }

    /// A message for a write error on this output.
    pub fn error(&self, e: impl std::fmt::Display) -> String {
        format!("{}: cannot write: {e}", self.shown)
    }

    /// Flushes the output to disk and puts it in place of the target. On an
    /// error the old target is left as it was.
    pub fn commit(mut self) -> Result<(), String> {
        if let Some(mut w) = self.writer.take() {
            w.flush().map_err(|e| self.error(e))?;
            let file = w.into_inner().map_err(|e| self.error(e.error()))?;
            if matches!(self.how, Target::Replace { .. }) {
                file.sync_all().map_err(|e| self.error(e))?;
            }
        }
        if let Target::Replace { tmp } = &self.how {
            std::fs::rename(tmp, &self.target).map_err(|e| self.error(e))?;
        }
        self.committed = true;
        Ok(())
    }
}

impl Drop for OutputFile {
    fn drop(&mut self) {
        self.writer = None;
        if let (false, Target::Replace { tmp }) = (self.committed, &self.how) {
            // Our own temporary file, never the target.
            let _ = std::fs::remove_file(tmp);
        }
    }
}

/// Commits outputs in order; stops at the first that fails (the later
/// ones' temporaries are removed, their targets untouched).
pub fn commit_all(outputs: impl IntoIterator<Item = OutputFile>) -> Result<(), String> {
    for o in outputs {
        o.commit()?;
    }
    Ok(())
}
