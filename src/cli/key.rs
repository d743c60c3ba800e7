//! `shardlog key`: the database's signing key, its fingerprint and where its private half is.

use std::path::{Path, PathBuf};

use super::{CliError, Context};
use crate::store::signing::{KeyStatus, KEY_DIR_VAR};
use crate::store::Store;

#[derive(Debug, clap::Args)]
pub struct KeyArgs {
    /// Also write the public key to FILE, for `verify --bundle DIR --key FILE` elsewhere.
    #[arg(long, value_name = "FILE")]
    pub public_key_file: Option<PathBuf>,
}

/// The folder of private keys: `$SHARDLOG_KEY_DIR`, else `shardlog/keys` in the platform's
/// data folder (`$XDG_DATA_HOME/shardlog/keys`, `~/.local/share/shardlog/keys`,
/// `~/Library/Application Support/shardlog/keys`, `%APPDATA%\shardlog\keys`).
pub fn key_dir() -> PathBuf {
    if let Some(p) = std::env::var_os(KEY_DIR_VAR).filter(|v| !v.is_empty()) {
        return PathBuf::from(p);
    }
    super::data_dir().join("shardlog").join("keys")
}

/// The database's key, made now when it has none; a usage-free failure names the folder.
pub(crate) fn ensure_key(s: &Store) -> Result<Option<KeyStatus>, CliError> {
    let dir = key_dir();
    s.signing_key(&dir).map_err(|e| {
        CliError::work(format!(
            "the signing key (folder {}, or set {KEY_DIR_VAR}): {e}",
            dir.display()
        ))
    })
}

/// Before a command that only reads (a report, a dispute bundle) opens the database: a
/// database without a key yet gets one when its file can be written, as `key` would make it;
/// when it cannot be written the command goes on and leaves unsigned, with its note.
pub(crate) fn make_key_if_missing(db: &std::path::Path) {
    if let Ok(s) = Store::open_existing(db) {
        if matches!(s.public_key(), Ok(None)) {
            let _ = ensure_key(&s);
        }
    }
}

/// A line for stderr when an export leaves unsigned.
pub(crate) fn unsigned_note(s: &Store) -> String {
    let fp = s
        .public_key()
        .ok()
        .flatten()
        .map(|k| k.fingerprint())
        .unwrap_or_else(|| "none yet".into());
    format!(
        "note: not signed: the private key of this database (fingerprint {fp}) is not in {}; this is a copy made elsewhere, or a read-only file without a key",
        key_dir().display()
    )
}

pub fn run(args: KeyArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let s = Store::open_existing(&ctx.db).map_err(|e| CliError::work(e.to_string()))?;
    let Some(st) = ensure_key(&s)? else {
        return Err(CliError::work(format!(
            "{} has no signing key yet and is read-only here; open it once where it can be written",
            ctx.db.display()
        )));
    };
    let (seq, hash) = s
        .audit_head_entry()
        .map_err(|e| CliError::work(e.to_string()))?;
    if st.created {
        writeln!(ctx.out, "made a new signing key for {}", ctx.db.display())?;
    }
    writeln!(ctx.out, "fingerprint  {}", st.public.fingerprint())?;
    writeln!(ctx.out, "public key   {}", st.public.hex())?;
    writeln!(
        ctx.out,
        "private key  {} ({})",
        st.private_file.display(),
        if st.private_present {
            "present: exports, reports and bundles are signed"
        } else {
            "NOT on this machine: exports from this copy are not signed"
        }
    )?;
    writeln!(ctx.out, "audit head   {seq}:{hash}")?;
    if let Some(file) = &args.public_key_file {
        write_public(file, &st)?;
        writeln!(ctx.out, "wrote the public key to {}", file.display())?;
    }
    Ok(())
}

fn write_public(file: &Path, st: &KeyStatus) -> Result<(), CliError> {
    crate::store::write_atomically(file, st.public.file_text().as_bytes(), false)
        .map_err(|e| CliError::work(format!("--public-key-file {}: {e}", file.display())))
}
