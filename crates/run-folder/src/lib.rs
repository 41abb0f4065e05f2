//! Run folders that are complete or absent.
//!
//! Key design decision: a folder of results is never written in place. A writer
//! ([`Staging`]) fills a fresh hidden sibling of the target, writes a manifest last
//! (`manifest.json`: a run id and every file with its size and CRC-32), and then moves
//! the whole folder into place in one step:
//!
//! - a fresh target is placed with `renameat2(RENAME_NOREPLACE)` (Linux), so a folder
//!   that appeared meanwhile is never overwritten;
//! - an existing target (only with `replace`) is swapped with `renameat2(RENAME_EXCHANGE)`
//!   (Linux ≥ 3.15 on ext4, xfs, btrfs, tmpfs and most local file systems), so at every
//!   moment the target path holds either the whole old folder or the whole new one; the
//!   old one is then deleted from its hidden name.
//!
//! Where `renameat2` is missing (another OS, or a file system that answers `EINVAL`),
//! the fallback is two renames: the old folder to a hidden name, the new one into place.
//! Between the two the target is briefly absent (never mixed); [`Placement`] says which
//! way was taken.
//!
//! The files themselves stay bit-identical for the same suite and seed (the project's
//! determinism promise), so the run id lives only in the manifest, and the manifest
//! ties each file to the run by its size and checksum. [`verify`] refuses a folder with
//! no manifest, a listed file missing or changed (a file of another run), or a file the
//! manifest does not list, naming each. CRC-32 guards against mixing and truncation by
//! accident, not against a forger: anyone can rewrite the manifest.
//!
//! Later additions to a sealed folder (the gate's files, a re-rendered report) go
//! through [`amend`], which builds the amended folder beside it (hard links for the
//! unchanged files) and exchanges it in the same way, so a folder is never half-amended.
//!
//! A test hook, [`fault_point`], aborts the process at a named step when
//! [`FAULT_ENV`] names it, so tests can kill a writer after each file and after the move
//! without timing games.

#![deny(missing_docs)]

use serde::{Deserialize, Serialize};
use std::io::{Read, Write};
use std::path::{Path, PathBuf};

/// The manifest's file name inside a run folder.
pub const MANIFEST_FILE: &str = "manifest.json";

/// The manifest format this crate writes and reads.
pub const MANIFEST_FORMAT: u32 = 1;

/// Test hook: when this environment variable names a step given to [`fault_point`]
/// (a file name just written, `manifest`, or `move`), the process aborts right there.
pub const FAULT_ENV: &str = "ECHOBENCH_FAULT_AFTER";

/// What kind of folder a manifest seals.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FolderKind {
    /// A run (or shard, or merged run) folder written by `run` or `merge`.
    Run,
    /// A reference folder: a run's result files kept for later comparison.
    Reference,
}

/// One file of a sealed folder.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct FileEntry {
    /// File name (no folders).
    pub name: String,
    /// Size, bytes.
    pub bytes: u64,
    /// CRC-32 (IEEE) of the content, 8 lower-case hex digits.
    pub crc32: String,
}

/// `manifest.json`: what belongs to the folder.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Manifest {
    /// [`MANIFEST_FORMAT`].
    pub format: u32,
    /// The run's id: unique per run (time, process id); kept by amendments and by a
    /// reference folder saved from the run.
    pub run_id: String,
    /// Run or reference.
    pub kind: FolderKind,
    /// Every file of the folder except the manifest, sorted by name.
    pub files: Vec<FileEntry>,
}

impl Manifest {
    /// The entry for `name`, if the folder has that file.
    #[must_use]
    pub fn file(&self, name: &str) -> Option<&FileEntry> {
        self.files.iter().find(|f| f.name == name)
    }
}

/// Why a folder cannot be written or read. Every variant names the folder or file.
#[derive(Debug, thiserror::Error)]
pub enum FolderError {
    /// The target exists and replacing it was not asked for.
    #[error("{}: already exists; pass --replace to replace it as a whole, or choose another folder", .0.display())]
    Exists(PathBuf),
    /// The target exists but is not a folder.
    #[error("{}: exists and is not a folder", .0.display())]
    NotAFolder(PathBuf),
    /// The folder is not complete or not of one run.
    #[error("{}: not a complete run folder: {}", dir.display(), problems.join("; "))]
    Incomplete {
        /// The folder.
        dir: PathBuf,
        /// Each problem, naming the file.
        problems: Vec<String>,
    },
    /// An I/O error.
    #[error("{}: {source}", path.display())]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The error.
        source: std::io::Error,
    },
}

fn io_error(path: &Path) -> impl FnOnce(std::io::Error) -> FolderError + '_ {
    move |source| FolderError::Io {
        path: path.to_path_buf(),
        source,
    }
}

/// How a finished folder was moved into place.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Placement {
    /// A fresh target: renamed into place (refusing a folder that appeared meanwhile where
    /// the system can).
    Fresh,
    /// An existing target swapped atomically with `renameat2(RENAME_EXCHANGE)`.
    Exchanged,
    /// An existing target replaced by two renames (no atomic exchange on this system):
    /// the target was briefly absent, never mixed.
    RenamedAside,
}

impl std::fmt::Display for Placement {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Placement::Fresh => "new folder",
            Placement::Exchanged => "replaced by atomic exchange",
            Placement::RenamedAside => "replaced by two renames (no atomic exchange here)",
        })
    }
}

/// Aborts the process when [`FAULT_ENV`] equals `step`: the fault-injection tests use it
/// to stop a writer right after each file and right after the move.
pub fn fault_point(step: &str) {
    if std::env::var_os(FAULT_ENV).is_some_and(|v| v == step) {
        std::process::abort();
    }
}

/// A new run id: the time in nanoseconds and the process id, so two runs never share one.
#[must_use]
pub fn new_run_id() -> String {
    let now = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap_or_default();
    format!(
        "{}.{:09}-{}",
        now.as_secs(),
        now.subsec_nanos(),
        std::process::id()
    )
}

/// A folder being written: files go into [`Staging::dir`], then [`Staging::commit`] seals
/// and places it. Dropped without a commit, the staged folder is deleted.
#[derive(Debug)]
pub struct Staging {
    target: PathBuf,
    temp: PathBuf,
    replace: bool,
    run_id: String,
    committed: bool,
}

fn parent_and_name(target: &Path) -> Result<(PathBuf, String), FolderError> {
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .ok_or_else(|| FolderError::NotAFolder(target.to_path_buf()))?;
    let parent = match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    Ok((parent, name))
}

/// Whether the process `pid` is alive (Linux: its `/proc` entry). Elsewhere every
/// process counts as alive, so no staged folder is ever deleted by mistake.
fn process_alive(pid: u32) -> bool {
    if cfg!(target_os = "linux") {
        Path::new("/proc").join(pid.to_string()).exists()
    } else {
        true
    }
}

/// Deletes hidden staging folders of `name` left by writers that were killed.
fn remove_stale(parent: &Path, name: &str) {
    let Ok(entries) = std::fs::read_dir(parent) else {
        return;
    };
    for entry in entries.flatten() {
        let file = entry.file_name().to_string_lossy().into_owned();
        for tag in [".partial-", ".old-"] {
            let prefix = format!(".{name}{tag}");
            let Some(rest) = file.strip_prefix(&prefix) else {
                continue;
            };
            let pid = rest.split('-').next().and_then(|p| p.parse::<u32>().ok());
            if pid.is_some_and(|p| p != std::process::id() && !process_alive(p)) {
                let _ = std::fs::remove_dir_all(entry.path());
            }
        }
    }
}

fn hidden_sibling(parent: &Path, name: &str, tag: &str) -> PathBuf {
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap_or_default()
        .subsec_nanos();
    parent.join(format!(".{name}.{tag}-{}-{nanos}", std::process::id()))
}

impl Staging {
    /// Starts a folder for `target` with a new run id. Refuses an existing target unless
    /// `replace` (checked here, before any work, and again at the move).
    ///
    /// # Errors
    /// [`FolderError::Exists`], [`FolderError::NotAFolder`], or an I/O error creating the
    /// staged folder.
    pub fn begin(target: &Path, replace: bool) -> Result<Staging, FolderError> {
        Self::begin_with_id(target, replace, new_run_id())
    }

    /// As [`Staging::begin`], keeping a given run id (an amendment, a reference folder).
    ///
    /// # Errors
    /// As [`Staging::begin`].
    pub fn begin_with_id(
        target: &Path,
        replace: bool,
        run_id: String,
    ) -> Result<Staging, FolderError> {
        match std::fs::symlink_metadata(target) {
            Ok(meta) if !meta.is_dir() => {
                return Err(FolderError::NotAFolder(target.to_path_buf()))
            }
            Ok(_) if !replace => return Err(FolderError::Exists(target.to_path_buf())),
            _ => {}
        }
        let (parent, name) = parent_and_name(target)?;
        std::fs::create_dir_all(&parent).map_err(io_error(&parent))?;
        remove_stale(&parent, &name);
        let temp = hidden_sibling(&parent, &name, "partial");
        std::fs::create_dir(&temp).map_err(io_error(&temp))?;
        Ok(Staging {
            target: target.to_path_buf(),
            temp,
            replace,
            run_id,
            committed: false,
        })
    }

    /// The staged folder: write the run's files here.
    #[must_use]
    pub fn dir(&self) -> &Path {
        &self.temp
    }

    /// The run id the manifest will carry.
    #[must_use]
    pub fn run_id(&self) -> &str {
        &self.run_id
    }

    /// The folder the staged one will become.
    #[must_use]
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Seals the staged folder with a manifest of every file in it (written last), then
    /// moves it into place as a whole.
    ///
    /// # Errors
    /// An I/O error reading the files or writing the manifest, [`FolderError::Exists`]
    /// when the target appeared meanwhile without `replace`, or a failed move.
    pub fn commit(mut self, kind: FolderKind) -> Result<(Manifest, Placement), FolderError> {
        let manifest = seal(&self.temp, &self.run_id, kind)?;
        fault_point("manifest");
        let placement = place(&self.temp, &self.target, self.replace)?;
        self.committed = true;
        fault_point("move");
        Ok((manifest, placement))
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.committed {
            let _ = std::fs::remove_dir_all(&self.temp);
        }
    }
}

fn sync_folder(dir: &Path) {
    // Durability of the names, best effort: the rename itself is what makes it atomic.
    if let Ok(f) = std::fs::File::open(dir) {
        let _ = f.sync_all();
    }
}

/// Moves `temp` to `target`; see the crate docs for the mechanism.
fn place(temp: &Path, target: &Path, replace: bool) -> Result<Placement, FolderError> {
    sync_folder(temp);
    let (parent, name) = parent_and_name(target)?;
    let exists = std::fs::symlink_metadata(target).is_ok();
    if exists && !replace {
        return Err(FolderError::Exists(target.to_path_buf()));
    }
    let placement = if exists {
        match exchange(temp, target) {
            Ok(()) => {
                // `temp` now holds the old folder.
                let _ = std::fs::remove_dir_all(temp);
                Placement::Exchanged
            }
            Err(e) if unsupported(&e) => {
                let aside = hidden_sibling(&parent, &name, "old");
                std::fs::rename(target, &aside).map_err(io_error(target))?;
                std::fs::rename(temp, target).map_err(io_error(target))?;
                let _ = std::fs::remove_dir_all(&aside);
                Placement::RenamedAside
            }
            Err(e) => return Err(io_error(target)(e)),
        }
    } else {
        match rename_noreplace(temp, target) {
            Ok(()) => {}
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                return Err(FolderError::Exists(target.to_path_buf()))
            }
            Err(e) if unsupported(&e) => {
                std::fs::rename(temp, target).map_err(io_error(target))?;
            }
            Err(e) => return Err(io_error(target)(e)),
        }
        Placement::Fresh
    };
    sync_folder(&parent);
    Ok(placement)
}

fn unsupported(e: &std::io::Error) -> bool {
    e.kind() == std::io::ErrorKind::Unsupported
        || matches!(e.raw_os_error(), Some(code) if code == libc::EINVAL || code == libc::ENOSYS)
}

#[cfg(all(target_os = "linux", target_env = "gnu"))]
fn renameat2(from: &Path, to: &Path, flags: libc::c_uint) -> std::io::Result<()> {
    use std::ffi::CString;
    use std::os::unix::ffi::OsStrExt;
    let from = CString::new(from.as_os_str().as_bytes())?;
    let to = CString::new(to.as_os_str().as_bytes())?;
    // SAFETY: both paths are NUL-terminated strings that live across the call;
    // AT_FDCWD makes them relative to the working directory as `rename` would.
    let code = unsafe {
        libc::renameat2(
            libc::AT_FDCWD,
            from.as_ptr(),
            libc::AT_FDCWD,
            to.as_ptr(),
            flags,
        )
    };
    if code == 0 {
        Ok(())
    } else {
        Err(std::io::Error::last_os_error())
    }
}

#[cfg(all(target_os = "linux", target_env = "gnu"))]
fn exchange(a: &Path, b: &Path) -> std::io::Result<()> {
    renameat2(a, b, libc::RENAME_EXCHANGE)
}

#[cfg(all(target_os = "linux", target_env = "gnu"))]
fn rename_noreplace(from: &Path, to: &Path) -> std::io::Result<()> {
    renameat2(from, to, libc::RENAME_NOREPLACE)
}

#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
fn exchange(_: &Path, _: &Path) -> std::io::Result<()> {
    Err(std::io::ErrorKind::Unsupported.into())
}

#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
fn rename_noreplace(_: &Path, _: &Path) -> std::io::Result<()> {
    Err(std::io::ErrorKind::Unsupported.into())
}

/// Size and CRC-32 of a file, read in blocks.
fn describe(path: &Path, name: &str) -> Result<FileEntry, FolderError> {
    let mut file = std::fs::File::open(path).map_err(io_error(path))?;
    let mut hasher = crc32fast::Hasher::new();
    let mut buffer = vec![0u8; 1 << 16];
    let mut bytes = 0u64;
    loop {
        let n = file.read(&mut buffer).map_err(io_error(path))?;
        if n == 0 {
            break;
        }
        bytes += n as u64;
        hasher.update(&buffer[..n]);
    }
    Ok(FileEntry {
        name: name.to_string(),
        bytes,
        crc32: format!("{:08x}", hasher.finalize()),
    })
}

/// The names in `dir` other than the manifest, sorted, with whether each is a plain file.
fn listing(dir: &Path) -> Result<Vec<(String, bool)>, FolderError> {
    let mut names = Vec::new();
    for entry in std::fs::read_dir(dir).map_err(io_error(dir))? {
        let entry = entry.map_err(io_error(dir))?;
        let name = entry.file_name().to_string_lossy().into_owned();
        if name == MANIFEST_FILE {
            continue;
        }
        let is_file = entry.file_type().is_ok_and(|t| t.is_file());
        names.push((name, is_file));
    }
    names.sort();
    Ok(names)
}

/// Writes `dir/manifest.json` listing every file now in `dir` under `run_id`. Writers use
/// it through [`Staging::commit`]; it is public for folders built by other means and for
/// tests that doctor a folder on purpose.
///
/// # Errors
/// A sub-folder in `dir` (a run folder holds only files), or an I/O error.
pub fn seal(dir: &Path, run_id: &str, kind: FolderKind) -> Result<Manifest, FolderError> {
    let mut files = Vec::new();
    for (name, is_file) in listing(dir)? {
        if !is_file {
            return Err(FolderError::Incomplete {
                dir: dir.to_path_buf(),
                problems: vec![format!("{name} is not a plain file")],
            });
        }
        files.push(describe(&dir.join(&name), &name)?);
    }
    let manifest = Manifest {
        format: MANIFEST_FORMAT,
        run_id: run_id.to_string(),
        kind,
        files,
    };
    let path = dir.join(MANIFEST_FILE);
    let text = serde_json::to_string_pretty(&manifest).map_err(|e| FolderError::Io {
        path: path.clone(),
        source: std::io::Error::other(e),
    })?;
    let mut file = std::fs::File::create(&path).map_err(io_error(&path))?;
    file.write_all(text.as_bytes())
        .and_then(|()| file.write_all(b"\n"))
        .and_then(|()| file.sync_all())
        .map_err(io_error(&path))?;
    Ok(manifest)
}

/// The manifest of `dir`, unchecked against the files.
fn read_manifest(dir: &Path) -> Result<Manifest, Vec<String>> {
    let path = dir.join(MANIFEST_FILE);
    let text = match std::fs::read_to_string(&path) {
        Ok(text) => text,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return Err(vec![format!(
                "{MANIFEST_FILE} is missing (the writer was stopped before it finished, or \
                 the folder was not written by this echobench)"
            )])
        }
        Err(e) => return Err(vec![format!("{MANIFEST_FILE}: cannot read: {e}")]),
    };
    let manifest: Manifest = serde_json::from_str(&text)
        .map_err(|e| vec![format!("{MANIFEST_FILE} is not a valid manifest: {e}")])?;
    if manifest.format != MANIFEST_FORMAT {
        return Err(vec![format!(
            "{MANIFEST_FILE} has format {}, this echobench reads format {MANIFEST_FORMAT}",
            manifest.format
        )]);
    }
    Ok(manifest)
}

/// A listed name must be one plain file name: a hostile manifest must not point outside.
fn plain_name(name: &str) -> bool {
    !name.is_empty()
        && name != "."
        && name != ".."
        && name != MANIFEST_FILE
        && !name.contains(['/', '\\', '\0'])
}

/// Checks that `dir` is complete and of one run: a valid manifest, every listed file
/// present with its size and checksum, no file the manifest does not list, and every
/// name in `required` listed. Returns the manifest.
///
/// # Errors
/// [`FolderError::Incomplete`] naming every missing, changed or foreign file (or the
/// missing manifest); [`FolderError::Io`] when the folder cannot be listed.
pub fn verify(dir: &Path, required: &[&str]) -> Result<Manifest, FolderError> {
    let incomplete = |problems: Vec<String>| FolderError::Incomplete {
        dir: dir.to_path_buf(),
        problems,
    };
    if !dir.is_dir() {
        return Err(FolderError::Io {
            path: dir.to_path_buf(),
            source: std::io::Error::new(std::io::ErrorKind::NotFound, "no such folder"),
        });
    }
    let manifest = read_manifest(dir).map_err(incomplete)?;
    let mut problems = Vec::new();
    let mut seen = std::collections::BTreeSet::new();
    for entry in &manifest.files {
        if !plain_name(&entry.name) || !seen.insert(entry.name.as_str()) {
            problems.push(format!(
                "{MANIFEST_FILE} lists `{}`, which is not one plain file name",
                entry.name
            ));
            continue;
        }
        let path = dir.join(&entry.name);
        match describe(&path, &entry.name) {
            Ok(found) if found == *entry => {}
            Ok(found) => problems.push(format!(
                "{} is not the file of run {} ({} bytes, CRC {}; the manifest says {} bytes, \
                 CRC {}): a file of another run, or cut short",
                entry.name, manifest.run_id, found.bytes, found.crc32, entry.bytes, entry.crc32
            )),
            Err(FolderError::Io { source, .. })
                if source.kind() == std::io::ErrorKind::NotFound =>
            {
                problems.push(format!("{} is missing", entry.name));
            }
            Err(e) => problems.push(e.to_string()),
        }
    }
    for name in required {
        if manifest.file(name).is_none() && !problems.iter().any(|p| p.starts_with(name)) {
            problems.push(format!("{name} is missing (not in the manifest)"));
        }
    }
    for (name, _) in listing(dir)? {
        if manifest.file(&name).is_none() {
            problems.push(format!(
                "{name} is not part of run {} (not in the manifest)",
                manifest.run_id
            ));
        }
    }
    if problems.is_empty() {
        Ok(manifest)
    } else {
        Err(incomplete(problems))
    }
}

/// Hard-links `from` to `to` (a sealed file is never rewritten in place: writers replace
/// files by rename), copying where links are not possible.
fn link_or_copy(from: &Path, to: &Path) -> Result<(), FolderError> {
    if std::fs::hard_link(from, to).is_ok() {
        return Ok(());
    }
    std::fs::copy(from, to).map(|_| ()).map_err(io_error(from))
}

/// Stages copies of `names` from the verified folder `from` for `target`, under the same
/// run id (a reference folder kept from a run). Write any more files, then commit.
///
/// # Errors
/// `from` not complete (see [`verify`]), a name not in its manifest, the target existing
/// without `replace`, or an I/O error.
pub fn stage_copy(
    from: &Path,
    names: &[&str],
    target: &Path,
    replace: bool,
) -> Result<Staging, FolderError> {
    let manifest = verify(from, names)?;
    let staging = Staging::begin_with_id(target, replace, manifest.run_id.clone())?;
    for name in names {
        // Copies, not links: the two folders live on separately, and a file edited in
        // place in one (by hand, by another tool) must not change the other.
        let (source, copy) = (from.join(name), staging.dir().join(name));
        std::fs::copy(&source, &copy).map_err(io_error(&source))?;
    }
    Ok(staging)
}

/// Adds or replaces files of the sealed folder `dir` as a whole: verifies it, builds the
/// amended folder beside it (unchanged files hard-linked), seals it under the same run id
/// and kind, and exchanges it into place. `write` puts the new files into the staged
/// folder it is given.
///
/// # Errors
/// `dir` not complete (see [`verify`]), an error from `write`, or an I/O error.
pub fn amend<F>(dir: &Path, write: F) -> Result<(Manifest, Placement), FolderError>
where
    F: FnOnce(&Path) -> std::io::Result<()>,
{
    let old = verify(dir, &[])?;
    let staging = Staging::begin_with_id(dir, true, old.run_id.clone())?;
    for entry in &old.files {
        link_or_copy(&dir.join(&entry.name), &staging.dir().join(&entry.name))?;
    }
    // The staged files are hard links to the sealed ones: `write` must replace a file
    // through a new inode ([`write_new_file`]), never write into it.
    write(staging.dir()).map_err(io_error(dir))?;
    staging.commit(old.kind)
}

/// Writes `bytes` as `dir/name` through a fresh inode: for [`amend`] callers, whose staged
/// folder holds hard links to the sealed folder's files.
///
/// # Errors
/// An I/O error, naming the file.
pub fn write_new_file(dir: &Path, name: &str, bytes: &[u8]) -> std::io::Result<()> {
    let path = dir.join(name);
    match std::fs::remove_file(&path) {
        Ok(()) => {}
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
        Err(e) => return Err(e),
    }
    std::fs::write(&path, bytes)
        .map_err(|e| std::io::Error::new(e.kind(), format!("writing {}: {e}", path.display())))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(tag: &str) -> PathBuf {
        let dir =
            std::env::temp_dir().join(format!("echobench-run-folder-{tag}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    fn write_run(target: &Path, replace: bool, content: &str) -> Result<Manifest, FolderError> {
        let staging = Staging::begin(target, replace)?;
        std::fs::write(staging.dir().join("tallies.json"), content).unwrap();
        std::fs::write(staging.dir().join("summary.json"), format!("s{content}")).unwrap();
        staging.commit(FolderKind::Run).map(|(m, _)| m)
    }

    #[test]
    fn a_fresh_folder_appears_whole_and_verifies() {
        let dir = scratch("fresh");
        let target = dir.join("run");
        let manifest = write_run(&target, false, "one").unwrap();
        assert_eq!(manifest.files.len(), 2);
        assert_eq!(verify(&target, &["tallies.json"]).unwrap(), manifest);
        // Nothing is left beside it.
        assert_eq!(std::fs::read_dir(&dir).unwrap().count(), 1);
        // CRC-32 of "one" by the IEEE polynomial, as `python3 -c 'import zlib;
        // print(hex(zlib.crc32(b"one")))'` gives it: an outside check of the checksum.
        assert_eq!(manifest.file("tallies.json").unwrap().crc32, "7a6c86f1");
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn an_existing_folder_is_refused_unless_replaced_and_then_exchanged() {
        let dir = scratch("replace");
        let target = dir.join("run");
        let first = write_run(&target, false, "one").unwrap();
        let err = write_run(&target, false, "two").unwrap_err();
        assert!(matches!(err, FolderError::Exists(_)), "{err}");
        assert!(err.to_string().contains("--replace"), "{err}");
        assert_eq!(verify(&target, &[]).unwrap(), first);
        let second = write_run(&target, true, "two").unwrap();
        assert_ne!(first.run_id, second.run_id);
        assert_eq!(verify(&target, &[]).unwrap(), second);
        assert_eq!(
            std::fs::read_to_string(target.join("tallies.json")).unwrap(),
            "two"
        );
        assert_eq!(
            std::fs::read_dir(&dir).unwrap().count(),
            1,
            "old folder removed"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn a_staging_dropped_without_commit_leaves_nothing() {
        let dir = scratch("drop");
        let staging = Staging::begin(&dir.join("run"), false).unwrap();
        std::fs::write(staging.dir().join("a"), "x").unwrap();
        drop(staging);
        assert_eq!(std::fs::read_dir(&dir).unwrap().count(), 0);
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn mixed_missing_foreign_and_unsealed_folders_are_refused_by_name() {
        let dir = scratch("mixed");
        let a = dir.join("a");
        let b = dir.join("b");
        write_run(&a, false, "one").unwrap();
        write_run(&b, false, "two!").unwrap();
        // A file of run b in run a.
        std::fs::copy(b.join("tallies.json"), a.join("tallies.json")).unwrap();
        let text = verify(&a, &[]).unwrap_err().to_string();
        assert!(
            text.contains("tallies.json is not the file of run"),
            "{text}"
        );
        // A missing file and a foreign one.
        std::fs::remove_file(b.join("summary.json")).unwrap();
        std::fs::write(b.join("gate.md"), "old").unwrap();
        let text = verify(&b, &[]).unwrap_err().to_string();
        assert!(text.contains("summary.json is missing"), "{text}");
        assert!(text.contains("gate.md is not part of run"), "{text}");
        // A required file the manifest does not list.
        let c = dir.join("c");
        write_run(&c, false, "three").unwrap();
        let text = verify(&c, &["roc.csv"]).unwrap_err().to_string();
        assert!(text.contains("roc.csv is missing"), "{text}");
        // No manifest: an empty folder, as a writer killed at once used to leave.
        let d = dir.join("d");
        std::fs::create_dir(&d).unwrap();
        let text = verify(&d, &[]).unwrap_err().to_string();
        assert!(text.contains("manifest.json is missing"), "{text}");
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn a_hostile_manifest_cannot_name_files_outside_the_folder() {
        let dir = scratch("hostile");
        let a = dir.join("a");
        write_run(&a, false, "one").unwrap();
        let path = a.join(MANIFEST_FILE);
        let text = std::fs::read_to_string(&path)
            .unwrap()
            .replace("\"summary.json\"", "\"../a/summary.json\"");
        std::fs::write(&path, text).unwrap();
        let text = verify(&a, &[]).unwrap_err().to_string();
        assert!(text.contains("not one plain file name"), "{text}");
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn an_amendment_keeps_the_run_id_and_the_old_files() {
        let dir = scratch("amend");
        let a = dir.join("a");
        let before = write_run(&a, false, "one").unwrap();
        let (after, _) = amend(&a, |staged| {
            write_new_file(staged, "gate.md", b"pass")?;
            write_new_file(staged, "summary.json", b"new summary")
        })
        .unwrap();
        assert_eq!(after.run_id, before.run_id);
        assert_eq!(verify(&a, &["gate.md"]).unwrap(), after);
        assert_eq!(
            std::fs::read_to_string(a.join("summary.json")).unwrap(),
            "new summary"
        );
        assert_eq!(std::fs::read_dir(&dir).unwrap().count(), 1);
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn a_copy_keeps_the_run_id_and_only_the_named_files() {
        let dir = scratch("copy");
        let a = dir.join("a");
        let run = write_run(&a, false, "one").unwrap();
        let staging = stage_copy(&a, &["tallies.json"], &dir.join("kept"), false).unwrap();
        let (kept, _) = staging.commit(FolderKind::Reference).unwrap();
        assert_eq!(kept.run_id, run.run_id);
        // Editing the kept file in place leaves the run's own file alone.
        std::fs::write(dir.join("kept").join("tallies.json"), "edited").unwrap();
        assert_eq!(verify(&a, &[]).unwrap(), run);
        assert_eq!(kept.files.len(), 1);
        assert_eq!(kept.kind, FolderKind::Reference);
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn staged_folders_of_dead_writers_are_removed() {
        let dir = scratch("stale");
        // Process ids are below 2^22 on Linux, so this one is never alive.
        let stale = dir.join(".run.partial-4194305-1");
        std::fs::create_dir(&stale).unwrap();
        write_run(&dir.join("run"), false, "one").unwrap();
        if cfg!(target_os = "linux") {
            assert!(!stale.exists());
        }
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
