//! Reading a file someone else may have prepared (an attachment to copy in, a bundle to
//! check, the files that come with an import): only a regular file, never through a symbolic
//! link, and never more bytes than a limit, counted as they are read (a size the folder
//! reports can lie: /dev/zero says 0). A FIFO is refused before it can block the reader.

use std::fs;
use std::io::Read;
use std::path::Path;

/// Why a file was not read; the message names the path and what it is instead.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum SafeReadError {
    #[error("{path}: is a symbolic link (to {target}); only a regular file is read, never through a link")]
    Link { path: String, target: String },
    #[error("{path}: is {kind}, not a regular file")]
    NotRegular { path: String, kind: &'static str },
    #[error("{path}: is larger than {limit} bytes")]
    TooLarge { path: String, limit: u64 },
    #[error("{path}: {message}")]
    Io { path: String, message: String },
}

/// What a file system entry is, in words.
fn kind_of(t: fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if t.is_fifo() {
            return "a named pipe (FIFO)";
        }
        if t.is_socket() {
            return "a socket";
        }
        if t.is_block_device() || t.is_char_device() {
            return "a device";
        }
    }
    if t.is_dir() {
        "a folder"
    } else if t.is_symlink() {
        "a symbolic link"
    } else if t.is_file() {
        "a regular file"
    } else {
        "something other than a file"
    }
}

/// Check that `path` itself (not what it may point to) is a regular file.
pub fn check_regular(path: &Path) -> Result<fs::Metadata, SafeReadError> {
    let shown = path.display().to_string();
    let meta = fs::symlink_metadata(path).map_err(|e| SafeReadError::Io {
        path: shown.clone(),
        message: e.to_string(),
    })?;
    let t = meta.file_type();
    if t.is_symlink() {
        let target = fs::read_link(path)
            .map(|t| t.display().to_string())
            .unwrap_or_else(|_| "an unreadable target".into());
        return Err(SafeReadError::Link {
            path: shown,
            target,
        });
    }
    if !t.is_file() {
        return Err(SafeReadError::NotRegular {
            path: shown,
            kind: kind_of(t),
        });
    }
    Ok(meta)
}

/// Open `path` for reading only if it is a regular file reached without a link. On Unix the
/// open itself refuses a link and never waits on a FIFO swapped in after the check, and the
/// opened handle is checked again.
fn open_regular(path: &Path) -> Result<fs::File, SafeReadError> {
    check_regular(path)?;
    let shown = path.display().to_string();
    let io = |e: std::io::Error| SafeReadError::Io {
        path: shown.clone(),
        message: e.to_string(),
    };
    let mut opts = fs::OpenOptions::new();
    opts.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        opts.custom_flags(libc::O_NOFOLLOW | libc::O_NONBLOCK);
    }
    let f = opts.open(path).map_err(io)?;
    let t = f.metadata().map_err(io)?.file_type();
    if !t.is_file() {
        return Err(SafeReadError::NotRegular {
            path: shown,
            kind: kind_of(t),
        });
    }
    Ok(f)
}

/// The whole content of a regular file of at most `limit` bytes (counted while reading).
pub fn read_regular(path: &Path, limit: u64) -> Result<Vec<u8>, SafeReadError> {
    let f = open_regular(path)?;
    let mut bytes = Vec::new();
    f.take(limit.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(|e| SafeReadError::Io {
            path: path.display().to_string(),
            message: e.to_string(),
        })?;
    if bytes.len() as u64 > limit {
        return Err(SafeReadError::TooLarge {
            path: path.display().to_string(),
            limit,
        });
    }
    Ok(bytes)
}

/// A file at `relative` inside `root`, read as [`read_regular`] does, with no folder on the
/// way below `root` a link either (a bundle's `photos` swapped for a link to elsewhere).
pub fn read_regular_within(
    root: &Path,
    relative: &str,
    limit: u64,
) -> Result<Vec<u8>, SafeReadError> {
    let mut at = root.to_path_buf();
    let parts: Vec<&str> = relative.split('/').filter(|p| !p.is_empty()).collect();
    for part in parts.iter().take(parts.len().saturating_sub(1)) {
        at.push(part);
        let meta = fs::symlink_metadata(&at).map_err(|e| SafeReadError::Io {
            path: at.display().to_string(),
            message: e.to_string(),
        })?;
        if meta.file_type().is_symlink() {
            check_regular(&at)?;
        } else if !meta.is_dir() {
            return Err(SafeReadError::NotRegular {
                path: at.display().to_string(),
                kind: kind_of(meta.file_type()),
            });
        }
    }
    read_regular(&root.join(relative), limit)
}

/// Whether a failed read found nothing at the path at all.
pub fn is_missing(e: &SafeReadError) -> bool {
    matches!(e, SafeReadError::Io { message, .. } if message.contains("No such file"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_links_fifos_folders_and_oversize() {
        let dir = tempfile::tempdir().unwrap();
        let plain = dir.path().join("plain");
        fs::write(&plain, b"12345").unwrap();
        assert_eq!(read_regular(&plain, 5).unwrap(), b"12345");
        assert!(matches!(
            read_regular(&plain, 4),
            Err(SafeReadError::TooLarge { .. })
        ));
        assert!(matches!(
            read_regular(dir.path(), 10),
            Err(SafeReadError::NotRegular { .. })
        ));
        #[cfg(unix)]
        {
            let link = dir.path().join("link");
            std::os::unix::fs::symlink(&plain, &link).unwrap();
            let e = read_regular(&link, 10).unwrap_err();
            assert!(e.to_string().contains("plain"), "{e}");
            let zero = dir.path().join("zero");
            std::os::unix::fs::symlink("/dev/zero", &zero).unwrap();
            assert!(matches!(
                read_regular(&zero, 10),
                Err(SafeReadError::Link { .. })
            ));
            assert!(matches!(
                read_regular(Path::new("/dev/zero"), 10),
                Err(SafeReadError::NotRegular { .. })
            ));
            let fifo = dir.path().join("fifo");
            let c = std::ffi::CString::new(fifo.to_str().unwrap()).unwrap();
            assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
            let e = read_regular(&fifo, 10).unwrap_err();
            assert!(e.to_string().contains("FIFO"), "{e}");
        }
    }
}
