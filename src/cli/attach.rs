//! `shardlog attach REF FILE... [--caption TEXT]`: files copied into the attachment folder
//! and attached to an incident, with the rules of the interface (a regular file only, never
//! through a link, within the size limit).

use std::path::PathBuf;

use super::records::{edge_stamp, open};
use super::{sanitize_for_terminal, CliError, Context};

#[derive(Debug, clap::Args)]
pub struct AttachArgs {
    /// Reference (BR-YYMMDD-NNNN) or id of the incident.
    #[arg(value_name = "REF")]
    pub reference: String,
    /// One or more files (photos, micrographs, notes).
    #[arg(value_name = "FILE", required = true)]
    pub files: Vec<PathBuf>,
    /// A caption for every file attached by this command.
    #[arg(long, value_name = "TEXT", default_value = "")]
    pub caption: String,
}

/// Attach each file in turn; every file is checked before the first is attached, so a
/// refused file leaves the incident as it was.
pub fn attach(args: AttachArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let mut s = open(&ctx.db)?;
    if s.find(&args.reference)
        .map_err(|e| CliError::work(e.to_string()))?
        .is_none()
    {
        return Err(CliError::work(format!("no incident {}", args.reference)));
    }
    for f in &args.files {
        crate::store::safe_file::check_regular(f).map_err(|e| CliError::work(e.to_string()))?;
    }
    let stamp = edge_stamp();
    for f in &args.files {
        let inc = s
            .add_attachment(&args.reference, f, &args.caption, &stamp)
            .map_err(|e| CliError::work(e.to_string()))?;
        if let Some(a) = inc.attachments.last() {
            writeln!(
                ctx.out,
                "attached {} to {} (SHA-256 {}, {} bytes)",
                sanitize_for_terminal(&a.file_name, false),
                inc.reference,
                a.sha256,
                a.size_bytes
            )?;
        }
    }
    Ok(())
}
