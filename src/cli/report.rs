//! `shardlog report` (one incident's summary) and `shardlog dispute` (a supplier's bundle).

use std::path::{Path, PathBuf};

use super::{CliError, Context};
use crate::report::{self, source, summary, Format, Paper};
use crate::store::Store;

#[derive(Debug, clap::Args)]
pub struct ReportArgs {
    /// Incident reference (e.g. BR-260314-0001) or key.
    #[arg(value_name = "REF")]
    pub reference: String,
    /// Output format.
    #[arg(long, value_enum, default_value = "pdf")]
    pub format: Format,
    /// Paper size for PDF and for printing the HTML.
    #[arg(long, value_enum, default_value = "a4")]
    pub paper: Paper,
    /// Output file (Markdown and JSON go to standard output without it).
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
}

pub(crate) fn open_store(db: &Path) -> Result<Store, CliError> {
    Store::open_existing(db).map_err(|e| CliError::work(e.to_string()))
}

pub(crate) fn now_text() -> String {
    chrono::Utc::now().format("%Y-%m-%d %H:%M:%S UTC").to_string()
}

/// Write a file through a temporary sibling and a rename, so that an interrupted write
/// never leaves a half-written file in place of a good one.
pub(crate) fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), CliError> {
    let shown = path.display();
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .ok_or_else(|| CliError::usage(format!("--output {shown}: not a file name")))?;
    let tmp = dir.join(format!(".{name}.partial-{}", std::process::id()));
    std::fs::write(&tmp, bytes).map_err(|e| CliError::work(format!("{shown}: {e}")))?;
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        CliError::work(format!("{shown}: {e}"))
    })
}

pub fn report(args: ReportArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if args.output.is_none() && matches!(args.format, Format::Pdf | Format::Html) {
        return Err(CliError::usage(
            "--output FILE is needed for PDF and HTML (they are not for the terminal)",
        ));
    }
    let store = open_store(&ctx.db)?;
    let inc = store
        .get(&args.reference)
        .map_err(|e| CliError::work(e.to_string()))?;
    let labels = source::Labels::load(&store).map_err(|e| CliError::work(e.to_string()))?;
    let (content, pictures) =
        source::incident_content(&store, &labels, &inc).map_err(|e| CliError::work(e.to_string()))?;
    let head = store
        .audit_head()
        .map_err(|e| CliError::work(e.to_string()))?;
    let proof = summary::proof_for(&content, Some(head), &now_text())
        .map_err(|e| CliError::work(format!("summary content: {e}")))?;
    let bytes = summary::render(&content, &proof, &pictures, args.format, args.paper)
        .map_err(|e| CliError::work(format!("summary content: {e}")))?;
    match &args.output {
        Some(path) => {
            write_atomic(path, &bytes)?;
            writeln!(
                ctx.out,
                "wrote {} ({} bytes); content SHA-256 {}",
                path.display(),
                bytes.len(),
                proof.content_sha256
            )?;
        }
        None => ctx.out.write_all(&bytes)?,
    }
    Ok(())
}

#[derive(Debug, clap::Args)]
pub struct DisputeArgs {}

pub fn dispute(_args: DisputeArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    let _ = report::Format::Pdf;
    Err(CliError::work("'dispute' is not built yet"))
}
