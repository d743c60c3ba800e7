//! Attachment files: kept in `<database>.files/` under their SHA-256, owner-only.

use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

use sha2::{Digest, Sha256};

use super::canon::hex;
use super::model::*;
use super::{Store, StoreError};

/// Largest attachment accepted (a micrograph series can be big; a video is not evidence here).
pub const MAX_ATTACHMENT_BYTES: u64 = 256 * 1024 * 1024;

/// `<database>.files` beside the database file.
pub(crate) fn dir_for(db: &Path) -> PathBuf {
    let mut name = db.file_name().map(|n| n.to_os_string()).unwrap_or_default();
    name.push(".files");
    db.with_file_name(name)
}

fn io_err(path: &Path, e: impl std::fmt::Display) -> StoreError {
    StoreError::File {
        path: path.display().to_string(),
        message: e.to_string(),
    }
}

fn make_private_dir(dir: &Path) -> Result<(), StoreError> {
    fs::create_dir_all(dir).map_err(|e| io_err(dir, e))?;
    make_dir_private(dir).map_err(|e| io_err(dir, e))
}

/// Write bytes to `dir/<sha256>` unless already there (through [`write_atomically`], so a
/// half-written file never carries a hash name).
pub(crate) fn put_bytes(dir: &Path, bytes: &[u8]) -> Result<String, StoreError> {
    let hash = hex(&Sha256::digest(bytes));
    make_private_dir(dir)?;
    let dest = dir.join(&hash);
    if dest.exists() {
        return Ok(hash);
    }
    write_atomically(&dest, bytes, true).map_err(|e| io_err(&dest, e))?;
    Ok(hash)
}

/// A temporary name beside `path`, unique within this process: `.<name>.partial-<pid>-<n>`.
pub fn temporary_sibling(path: &Path) -> PathBuf {
    static N: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
    let n = N.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "file".into());
    path.with_file_name(format!(".{name}.partial-{}-{n}", std::process::id()))
}

/// Whether the process `pid` still runs (on Unix; elsewhere every process is taken as
/// running, so nothing is removed).
fn process_alive(pid: u32) -> bool {
    if pid == std::process::id() {
        return true;
    }
    #[cfg(unix)]
    {
        let Ok(p) = libc::pid_t::try_from(pid) else {
            return false;
        };
        // signal 0: no signal sent, only the check that the process exists
        if unsafe { libc::kill(p, 0) } == 0 {
            return true;
        }
        std::io::Error::last_os_error().raw_os_error() == Some(libc::EPERM)
    }
    #[cfg(not(unix))]
    {
        true
    }
}

/// The process id in a temporary name of ours, `.NAME.partial-PID…`.
fn partial_pid(file_name: &str) -> Option<u32> {
    let rest = file_name.strip_prefix('.')?;
    let at = rest.find(".partial-")?;
    let digits: String = rest[at + ".partial-".len()..]
        .chars()
        .take_while(char::is_ascii_digit)
        .collect();
    digits.parse().ok()
}

fn size_of(path: &Path) -> u64 {
    match fs::symlink_metadata(path) {
        Ok(m) if m.is_dir() => fs::read_dir(path)
            .map(|rd| rd.flatten().map(|e| size_of(&e.path())).sum())
            .unwrap_or(0),
        Ok(m) => m.len(),
        Err(_) => 0,
    }
}

/// Remove what an interrupted run of shardlog left in the folder `target` is written to:
/// hidden `.NAME.partial-PID…` files and folders (a backup's copy, a bundle under way, a
/// demo database, an export) whose process no longer runs. Returns each one removed with
/// its size in bytes, for the message that says so. Others' leftovers under way are kept.
pub fn remove_stale_partials(target: &Path) -> Vec<(PathBuf, u64)> {
    let dir = match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let Ok(entries) = fs::read_dir(&dir) else {
        return Vec::new();
    };
    let mut removed = Vec::new();
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let Some(pid) = partial_pid(&name) else {
            continue;
        };
        if process_alive(pid) {
            continue;
        }
        let p = e.path();
        let size = size_of(&p);
        let gone = match e.file_type() {
            Ok(t) if t.is_dir() => fs::remove_dir_all(&p),
            _ => fs::remove_file(&p),
        };
        if gone.is_ok() {
            removed.push((p, size));
        }
    }
    removed.sort();
    removed
}

/// Flush a folder's entries (a rename in it) to the disk. A no-op where folders cannot be
/// opened (Windows).
pub fn sync_dir(dir: &Path) -> std::io::Result<()> {
    let dir = if dir.as_os_str().is_empty() {
        Path::new(".")
    } else {
        dir
    };
    #[cfg(unix)]
    {
        fs::File::open(dir)?.sync_all()
    }
    #[cfg(not(unix))]
    {
        let _ = dir;
        Ok(())
    }
}

/// The mode of a file the tool writes: owner-only (0600) when `private`, else readable by
/// all and writable by its owner only (0644). Set on the open file, so the umask cannot
/// widen it; nothing shardlog writes is ever group- or world-writable.
pub fn file_mode(private: bool) -> u32 {
    if private {
        0o600
    } else {
        0o644
    }
}

/// Give a folder the tool made the owner-only mode (0700), whatever the umask.
pub fn make_dir_private(dir: &Path) -> std::io::Result<()> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        fs::set_permissions(dir, fs::Permissions::from_mode(0o700))
    }
    #[cfg(not(unix))]
    {
        let _ = dir;
        Ok(())
    }
}

/// Create `path` new (it must not exist) and write `bytes`, not yet flushed to the disk (see
/// [`sync_written`]). The mode is [`file_mode`]; on failure the partial file is removed.
pub fn write_new(path: &Path, bytes: &[u8], private: bool) -> std::io::Result<()> {
    write_new_then(path, bytes, private, |_| Ok(()))
}

/// Flush to the disk every file written into `dir` by [`write_new`] (`files`, and the folder's
/// entries): on Linux one `syncfs` of the file system holding `dir`, which flushes them all at
/// once (a flush per file costs a disk round trip each); elsewhere each file in turn.
pub fn sync_written(dir: &Path, files: &[PathBuf]) -> std::io::Result<()> {
    #[cfg(target_os = "linux")]
    {
        use std::os::fd::AsRawFd;
        let _ = files;
        let d = fs::File::open(dir)?;
        // SAFETY: syncfs reads only the descriptor, which `d` keeps open for the call
        if unsafe { libc::syncfs(d.as_raw_fd()) } != 0 {
            return Err(std::io::Error::last_os_error());
        }
        Ok(())
    }
    #[cfg(not(target_os = "linux"))]
    {
        for f in files {
            fs::File::open(f)?.sync_all()?;
        }
        sync_dir(dir)
    }
}

/// Create `path` new (it must not exist), write `bytes`, flush them to the disk. The mode is
/// [`file_mode`]: owner-only when `private`. On failure the partial file is removed.
pub fn write_new_synced(path: &Path, bytes: &[u8], private: bool) -> std::io::Result<()> {
    write_new_then(path, bytes, private, fs::File::sync_all)
}

/// Create `path` new (it must not exist) with [`file_mode`]: owner-only when `private`.
fn create_new_file(path: &Path, private: bool) -> std::io::Result<fs::File> {
    let mut opts = fs::OpenOptions::new();
    opts.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        opts.mode(0o600);
    }
    let f = opts.open(path)?;
    #[cfg(unix)]
    let r = {
        use std::os::unix::fs::PermissionsExt;
        f.set_permissions(fs::Permissions::from_mode(file_mode(private)))
    };
    #[cfg(not(unix))]
    let r = {
        let _ = private;
        Ok(())
    };
    if let Err(e) = r {
        drop(f);
        let _ = fs::remove_file(path);
        return Err(e);
    }
    Ok(f)
}

/// [`write_new`], then `finish` on the written file.
fn write_new_then(
    path: &Path,
    bytes: &[u8],
    private: bool,
    finish: fn(&fs::File) -> std::io::Result<()>,
) -> std::io::Result<()> {
    let mut f = create_new_file(path, private)?;
    let r = f.write_all(bytes).and_then(|()| finish(&f));
    if r.is_err() {
        drop(f);
        let _ = fs::remove_file(path);
    }
    r
}

/// [`write_atomically`] of what `write` writes, as it writes it (a large output is never
/// held whole): on any failure, `write`'s own included, the temporary file is removed and
/// whatever was at `path` before is untouched.
pub fn write_atomically_with<T>(
    path: &Path,
    private: bool,
    write: impl FnOnce(&mut dyn Write) -> Result<T, StoreError>,
) -> Result<T, StoreError> {
    replace_file(path, private, write, |e| io_err(path, e))
}

/// Replace (or create) `path` with `bytes` so that a reader, a crash or a failed write never
/// finds a half-written file there: write a temporary file in the same folder, flush it,
/// rename it over `path`, flush the folder. On failure the temporary file is removed and
/// whatever was at `path` before is untouched.
pub fn write_atomically(path: &Path, bytes: &[u8], private: bool) -> std::io::Result<()> {
    replace_file(path, private, |w| w.write_all(bytes), |e| e)
}

/// The one sequence behind [`write_atomically`] and [`write_atomically_with`]: a new temporary
/// sibling, `write` into it through a buffer, flush it to the disk, rename it over `path`, flush
/// the folder; on any failure before the rename the temporary file is removed. `io` turns an
/// I/O failure into the caller's error type.
fn replace_file<T, E>(
    path: &Path,
    private: bool,
    write: impl FnOnce(&mut dyn Write) -> Result<T, E>,
    io: impl Fn(std::io::Error) -> E,
) -> Result<T, E> {
    let tmp = temporary_sibling(path);
    let f = create_new_file(&tmp, private).map_err(&io)?;
    let written = (|| {
        let mut w = std::io::BufWriter::new(f);
        let t = write(&mut w)?;
        let f = w.into_inner().map_err(|e| io(e.into_error()))?;
        f.sync_all().map_err(&io)?;
        drop(f);
        fs::rename(&tmp, path).map_err(&io)?;
        Ok(t)
    })();
    match written {
        Ok(t) => {
            sync_dir(path.parent().unwrap_or(Path::new("."))).map_err(&io)?;
            Ok(t)
        }
        Err(e) => {
            let _ = fs::remove_file(&tmp);
            Err(e)
        }
    }
}

pub(crate) fn copy_dir(src: &Path, dest: &Path) -> Result<(), StoreError> {
    make_private_dir(dest)?;
    for entry in fs::read_dir(src).map_err(|e| io_err(src, e))? {
        let entry = entry.map_err(|e| io_err(src, e))?;
        let p = entry.path();
        if p.is_file() {
            let bytes = fs::read(&p).map_err(|e| io_err(&p, e))?;
            put_bytes(dest, &bytes)?;
        }
    }
    Ok(())
}

/// A media type from the file name's extension.
pub fn media_type_for(name: &str) -> &'static str {
    let ext = name.rsplit('.').next().unwrap_or("").to_ascii_lowercase();
    match ext.as_str() {
        "png" => "image/png",
        "jpg" | "jpeg" => "image/jpeg",
        "tif" | "tiff" => "image/tiff",
        "bmp" => "image/bmp",
        "pdf" => "application/pdf",
        "txt" => "text/plain",
        "csv" => "text/csv",
        _ => "application/octet-stream",
    }
}

impl Store {
    /// Copy a file into the attachment folder (named by its SHA-256) and attach it to the
    /// incident. The record keeps the hash and the original file name, never the path.
    pub fn add_attachment(
        &mut self,
        key: &str,
        file: &Path,
        caption: &str,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        // only a regular file, never what a link points to (a link to a private file would
        // otherwise be copied in and later handed out in a bundle), never past the limit
        let bytes =
            super::safe_file::read_regular(file, MAX_ATTACHMENT_BYTES).map_err(|e| match e {
                super::safe_file::SafeReadError::TooLarge { .. } => io_err(
                    file,
                    format!("is larger than {} MB", MAX_ATTACHMENT_BYTES / (1024 * 1024)),
                ),
                other => StoreError::File {
                    path: file.display().to_string(),
                    message: other
                        .to_string()
                        .trim_start_matches(&format!("{}: ", file.display()))
                        .to_string(),
                },
            })?;
        let name = file
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "attachment".into());
        self.add_attachment_bytes(key, &name, &bytes, caption, stamp)
    }

    /// Attach bytes under a file name (the demo and imports use this).
    pub fn add_attachment_bytes(
        &mut self,
        key: &str,
        file_name: &str,
        bytes: &[u8],
        caption: &str,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let Some(dir) = self.files_dir.clone() else {
            return Err(StoreError::invalid(
                "attachment",
                "this database has no attachment folder (in memory)",
            ));
        };
        // make sure the incident exists before copying anything in
        self.get(key)?;
        let hash = put_bytes(&dir, bytes)?;
        let att = Attachment {
            id: String::new(),
            sha256: hash,
            file_name: file_name.to_string(),
            media_type: media_type_for(file_name).to_string(),
            size_bytes: bytes.len() as i64,
            caption: caption.to_string(),
            added_at: stamp.at,
        };
        self.modify_incident(key, None, stamp, move |inc| {
            inc.attachments.push(att);
            Ok(())
        })
    }

    /// Where an attachment's bytes are, if the file is present.
    pub fn attachment_path(&self, sha256: &str) -> Option<PathBuf> {
        if sha256.len() != 64 || !sha256.bytes().all(|b| b.is_ascii_hexdigit()) {
            return None;
        }
        let p = self.files_dir.as_ref()?.join(sha256);
        p.is_file().then_some(p)
    }
}
