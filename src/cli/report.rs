//! `shardlog report` (one incident's summary) and `shardlog dispute` (a supplier's bundle).

use std::path::{Path, PathBuf};

use super::codes::{resolve, resolve_opt, Field};
use super::records::{open_to_read, write_whole};
use super::{parse_day, CliError, Context};
use crate::report::{self, source, summary, Format, Paper};

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

pub(crate) fn now_text() -> String {
    chrono::Utc::now()
        .format("%Y-%m-%d %H:%M:%S UTC")
        .to_string()
}

/// Write a file through a temporary sibling and a rename, so that an interrupted write
/// never leaves a half-written file in place of a good one.
pub(crate) fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), CliError> {
    if path.file_name().is_none() {
        return Err(CliError::usage(format!(
            "--output {}: not a file name",
            path.display()
        )));
    }
    // one incident's summary, made to be handed on: readable by others, writable by no one
    // but its owner
    write_whole(path, bytes, false)
}

pub fn report(args: ReportArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if args.output.is_none() && matches!(args.format, Format::Pdf | Format::Html) {
        return Err(CliError::usage(
            "--output FILE is needed for PDF and HTML (they are not for the terminal)",
        ));
    }
    super::key::make_key_if_missing(&ctx.db);
    let store = open_to_read(&ctx.db)?;
    // the incident and the head printed under it come from one snapshot
    let read = |store: &crate::store::Store| -> Result<_, CliError> {
        let inc = store
            .get(&args.reference)
            .map_err(|e| CliError::work(e.to_string()))?;
        let labels = source::Labels::load(store).map_err(|e| CliError::work(e.to_string()))?;
        let (content, pictures) = source::incident_content(store, &labels, &inc)
            .map_err(|e| CliError::work(e.to_string()))?;
        let (seq, head) = store
            .audit_head_entry()
            .map_err(|e| CliError::work(e.to_string()))?;
        Ok((content, pictures, seq, head))
    };
    let (content, pictures, seq, head) = store
        .consistent_read(|s| Ok::<_, crate::store::StoreError>(read(s)))
        .map_err(|e| CliError::work(e.to_string()))??;
    let mut proof = summary::proof_for(&content, Some(head.clone()), &now_text())
        .map_err(|e| CliError::work(format!("summary content: {e}")))?;
    proof.signed_head = store
        .sign_head_at(&super::key::key_dir(), seq, &head, &proof.content_sha256)
        .map_err(|e| CliError::work(e.to_string()))?;
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
pub struct DisputeArgs {
    /// Supplier code or name.
    #[arg(long, value_name = "NAME")]
    pub supplier: String,
    /// Only this lot.
    #[arg(long, value_name = "LOT")]
    pub lot: Option<String>,
    /// Only incidents of this cause, code or label (repeatable: any of them); the cover
    /// leads with it and says how many incidents of other causes were left out.
    #[arg(long, value_name = "C")]
    pub cause: Vec<String>,
    /// Only incidents of this origin type, code or label.
    #[arg(long, value_name = "T")]
    pub origin_type: Option<String>,
    /// Incidents found on or after this date (YYYY-MM-DD).
    #[arg(long, value_name = "DATE")]
    pub since: Option<String>,
    /// Incidents found on or before this date (YYYY-MM-DD).
    #[arg(long, value_name = "DATE")]
    pub until: Option<String>,
    /// Paper size of the PDFs.
    #[arg(long, value_enum, default_value = "a4")]
    pub paper: Paper,
    /// The bundle folder to create (must not exist, or be empty).
    #[arg(short = 'o', long = "output", value_name = "DIR")]
    pub output: PathBuf,
    /// Write the bundle even if some photos or files are missing; the cover names them.
    #[arg(long)]
    pub allow_missing_attachments: bool,
}

fn date_flag(flag: &str, v: &Option<String>) -> Result<Option<chrono::NaiveDate>, CliError> {
    match v {
        None => Ok(None),
        Some(t) => parse_day(t).map(Some).ok_or_else(|| {
            CliError::usage(format!(
                "--{flag} {t}: expected a date as YYYY-MM-DD, e.g. 2027-03-14"
            ))
        }),
    }
}

pub fn dispute(args: DisputeArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let since = date_flag("since", &args.since)?;
    let until = date_flag("until", &args.until)?;
    super::key::make_key_if_missing(&ctx.db);
    let store = open_to_read(&ctx.db)?;
    super::leftovers::clear_leftovers(&args.output);
    let supplier = resolve(&store, Field::Supplier, "--supplier", &args.supplier)?;
    let lot = resolve_opt(&store, Field::Lot, "--lot", &args.lot)?;
    let mut causes = Vec::new();
    for c in &args.cause {
        let code = resolve(&store, Field::Cause, "--cause", c)?;
        if !causes.contains(&code) {
            causes.push(code);
        }
    }
    let origin_type = resolve_opt(
        &store,
        Field::OriginType,
        "--origin-type",
        &args.origin_type,
    )?;
    let opts = report::bundle::DisputeOptions {
        supplier,
        lot,
        causes,
        origin_type,
        since,
        until,
        paper: args.paper,
        exported_at: now_text(),
        today: chrono::Utc::now().date_naive(),
        key_dir: Some(super::key::key_dir()),
        allow_missing_attachments: args.allow_missing_attachments,
    };
    let meter = super::progress::Meter::on_stderr();
    store.set_progress(meter.as_ref().map(|m| m.callback()));
    let w = report::bundle::write_bundle(&store, &opts, &args.output);
    drop(meter);
    let w = w.map_err(CliError::from)?;
    writeln!(
        ctx.out,
        "wrote {}: {} incident summaries, {} attachments, {} files",
        w.dir.display(),
        w.incidents,
        w.attachments,
        w.files
    )?;
    writeln!(ctx.out, "content SHA-256     {}", w.content_sha256)?;
    writeln!(ctx.out, "audit-chain head    {}", w.audit_chain_head)?;
    if let Some(seq) = w.audit_head_seq {
        writeln!(ctx.out, "anchor              {seq}:{}", w.audit_chain_head)?;
    }
    match &w.signed_head {
        Some(h) => writeln!(ctx.out, "signed with key     {}", h.fingerprint)?,
        None => writeln!(ctx.out, "{}", super::key::unsigned_note(&store))?,
    }
    writeln!(
        ctx.out,
        "check it with: shardlog --db {} verify --bundle {}",
        ctx.db.display(),
        w.dir.display()
    )?;
    Ok(())
}
