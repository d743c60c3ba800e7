//! A backup: the database copied with SQLite's online backup and its attachment folder
//! beside it, checked, then renamed into place whole.

use std::path::{Path, PathBuf};

use super::{files, sqlite, Store, StoreError, VerifyReport};

impl Store {
    /// Copy the database with SQLite's online backup to `dest` (which must not exist),
    /// copy the attachment folder beside it, then run an integrity check and `verify` on
    /// the copy. Everything is made under temporary names and renamed into place only when
    /// whole and flushed to the disk: a failure half-way leaves nothing at `dest` and no
    /// temporary files. The copy is readable by its owner only.
    pub fn backup(&self, dest: &Path) -> Result<VerifyReport, StoreError> {
        let shown = dest.display().to_string();
        let dest_files = files::dir_for(dest);
        for p in [dest, dest_files.as_path()] {
            if p.exists() {
                return Err(StoreError::File {
                    path: p.display().to_string(),
                    message: "already exists; choose a new file name".into(),
                });
            }
        }
        let tmp = files::temporary_sibling(dest);
        let tmp_files = files::dir_for(&tmp);
        let clean = || {
            let _ = std::fs::remove_file(&tmp);
            for suffix in ["-wal", "-shm", "-journal"] {
                let mut n = tmp.as_os_str().to_os_string();
                n.push(suffix);
                let _ = std::fs::remove_file(PathBuf::from(n));
            }
            let _ = std::fs::remove_dir_all(&tmp_files);
        };
        let result = (|| -> Result<VerifyReport, StoreError> {
            let file_err = |e: &dyn std::fmt::Display| StoreError::File {
                path: shown.clone(),
                message: e.to_string(),
            };
            {
                // the copy in one file (no WAL beside it), flushed to the disk
                self.report_progress("copying", 0, None);
                sqlite::copy_database(&self.conn, &tmp)?;
            }
            std::fs::File::open(&tmp)
                .and_then(|f| f.sync_all())
                .map_err(|e| file_err(&e))?;
            if let Some(src) = self.files_dir.as_deref() {
                if src.is_dir() {
                    files::copy_dir(src, &tmp_files)?;
                    files::sync_dir(&tmp_files).map_err(|e| file_err(&e))?;
                }
            }
            let report = {
                let copy = Store::open_existing(&tmp)?;
                self.report_progress("checking the copy", 0, None);
                sqlite::integrity_check(&copy.conn)?;
                // the copy's verify tells this store's callback how far it has come
                copy.set_progress(self.progress.take());
                let report = copy.verify();
                self.progress.set(copy.set_progress(None));
                report?
            };
            if tmp_files.is_dir() {
                std::fs::rename(&tmp_files, &dest_files).map_err(|e| file_err(&e))?;
            }
            std::fs::rename(&tmp, dest).map_err(|e| file_err(&e))?;
            files::sync_dir(dest.parent().unwrap_or(Path::new("."))).map_err(|e| file_err(&e))?;
            Ok(report)
        })();
        if result.is_err() {
            clean();
            if !dest.exists() {
                let _ = std::fs::remove_dir_all(&dest_files);
            }
        }
        result
    }
}
