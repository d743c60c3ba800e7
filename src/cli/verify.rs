//! `verify`: the audit chain of the database (with anchors), a dispute bundle (with or
//! without the database, and against a key), or this bench against the fleet.

use std::path::Path;

use super::records::{clean, open_to_read, work};
use super::{CliError, Context};
use crate::report::bundle::ExpectedKey;
use crate::store::exchange::MAX_IMPORT_BYTES;

#[derive(Debug, clap::Args)]
pub struct VerifyArgs {
    /// Print the report as JSON.
    #[arg(long)]
    pub json: bool,
    /// Check a dispute bundle folder instead (and compare it with the database if present).
    #[arg(long, value_name = "DIR")]
    pub bundle: Option<std::path::PathBuf>,
    /// A head taken earlier (`shardlog key`, a signed export or bundle): the chain must still
    /// hold HASH at entry SEQ. Repeatable.
    #[arg(long, value_name = "SEQ:HASH")]
    pub anchor: Vec<crate::store::Anchor>,
    /// With --bundle or --export: check the signature against this key (a fingerprint as
    /// `shardlog key` prints it, or a public key file), with or without the database.
    #[arg(long, value_name = "FINGERPRINT|PUBKEYFILE")]
    pub key: Option<String>,
    /// Check a JSON or CSV export (its signed head and content), and compare it with the
    /// database if present.
    #[arg(long, value_name = "FILE", conflicts_with_all = ["bundle", "fleet"])]
    pub export: Option<std::path::PathBuf>,
    /// Check this bench's history against what the fleet database witnessed.
    #[arg(long, value_name = "URL", conflicts_with = "bundle")]
    pub fleet: Option<String>,
}

pub fn verify(args: VerifyArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if let Some(dir) = &args.bundle {
        return verify_bundle(dir, &args, ctx);
    }
    if let Some(file) = &args.export {
        return verify_export(file, &args, ctx);
    }
    if args.key.is_some() {
        return Err(CliError::usage(
            "--key checks the signature of a bundle or an export: give --bundle DIR or --export FILE",
        ));
    }
    if let Some(url) = args.fleet {
        return super::fleet::verify_fleet(url, args.json, ctx);
    }
    if crate::store::is_fleet_url(&ctx.db) {
        return verify_fleet_database(&args, ctx);
    }
    let s = open_to_read(&ctx.db)?;
    let meter = super::progress::Meter::on_stderr();
    s.set_progress(meter.as_ref().map(|m| m.callback()));
    let r = s.verify();
    drop(meter);
    let mut r = r.map_err(work)?;
    for p in s.check_anchors(&args.anchor).map_err(work)? {
        r.add_problem(p);
    }
    if args.json {
        let text =
            serde_json::to_string_pretty(&r).map_err(|e| CliError::work(format!("JSON: {e}")))?;
        writeln!(ctx.out, "{text}")?;
    }
    match &r.first_problem {
        None => {
            if !args.json {
                writeln!(
                    ctx.out,
                    "ok: {} audit rows chain correctly, {} records match their last audited version; head {}",
                    r.audit_rows, r.records_checked, r.head
                )?;
                if args.anchor.is_empty() {
                    writeln!(ctx.out, "note: this proves the file agrees with itself, not that its history was never rewritten; check a head kept elsewhere with --anchor SEQ:HASH or --bundle DIR")?;
                } else {
                    writeln!(
                        ctx.out,
                        "ok: the chain still holds {} anchor{} taken earlier",
                        args.anchor.len(),
                        if args.anchor.len() == 1 { "" } else { "s" }
                    )?;
                }
            }
            Ok(())
        }
        Some(p) => {
            if !args.json {
                for d in &r.damaged {
                    writeln!(ctx.out, "DAMAGED: {}", clean(d))?;
                }
            }
            Err(CliError::work(format!(
                "verify failed: {} problem{}; the first: {p}",
                r.problems,
                if r.problems == 1 { "" } else { "s" }
            )))
        }
    }
}

/// `--key FINGERPRINT|PUBKEYFILE`: an existing file is read as a public key file.
fn expected_key(text: &str) -> Result<ExpectedKey, CliError> {
    let path = Path::new(text);
    let from_file = path.is_file();
    let parsed = if from_file {
        let meta =
            std::fs::metadata(path).map_err(|e| CliError::usage(format!("--key {text}: {e}")))?;
        if meta.len() > 4096 {
            return Err(CliError::usage(format!(
                "--key {text}: not a public key file (larger than 4 KB)"
            )));
        }
        let t = std::fs::read_to_string(path)
            .map_err(|e| CliError::usage(format!("--key {text}: {e}")))?;
        ExpectedKey::parse(&t)
    } else {
        ExpectedKey::parse(text)
    };
    parsed.ok_or_else(|| {
        CliError::usage(format!(
            "--key {}: expected a fingerprint as `shardlog key` prints it (32 hex digits, hyphens optional) or a public key file it wrote",
            clean(text)
        ))
    })
}

/// `verify --bundle DIR`: the bundle alone, and against the database when there is one.
/// With `--db` or `$SHARDLOG_DB` the database must exist; without them the bundle is
/// checked alone when the default database is absent.
fn verify_bundle(dir: &Path, args: &VerifyArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let key = args.key.as_deref().map(expected_key).transpose()?;
    if !args.anchor.is_empty() {
        return Err(CliError::usage(
            "--anchor checks the database's chain; with --bundle the bundle's own head is the anchor",
        ));
    }
    let store: Option<Box<dyn crate::store::ReportSource>> = if crate::store::is_fleet_url(&ctx.db)
    {
        Some(open_fleet_for_bundle(dir, ctx)?)
    } else {
        open_if_there(ctx)?.map(|s| Box::new(s) as Box<dyn crate::store::ReportSource>)
    };
    let check = crate::report::bundle::verify_bundle_with(dir, store.as_deref(), key.as_ref())?;
    let shown = clean(&dir.display().to_string());
    writeln!(
        ctx.out,
        "bundle {shown}: {} incidents, {} files checked{}",
        check.incidents,
        check.files_checked,
        if check.compared_with_records {
            format!(
                ", compared with the records in {}",
                super::report::without_password(&ctx.db.to_string_lossy())
            )
        } else {
            " (no database: the records were not compared)".to_string()
        }
    )?;
    write_notes(ctx, &check.notes)?;
    if check.ok() {
        writeln!(
            ctx.out,
            "ok: every file matches the bundle's digest{}{}",
            if key.is_some() {
                ", its head is signed with the expected key"
            } else {
                ""
            },
            if check.compared_with_records {
                " and the bundle matches the records"
            } else {
                ""
            }
        )?;
        return Ok(());
    }
    differences(ctx, "bundle", &check.problems)
}

/// `verify --export FILE`: a signed JSON or CSV export, alone and against the database when
/// there is one (as for a bundle).
fn verify_export(file: &Path, args: &VerifyArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let key = args.key.as_deref().map(expected_key).transpose()?;
    if !args.anchor.is_empty() {
        return Err(CliError::usage(
            "--anchor checks the database's chain; with --export the export's own head is the anchor",
        ));
    }
    let shown = clean(&file.display().to_string());
    let bytes = crate::store::safe_file::read_regular(file, MAX_IMPORT_BYTES as u64)
        .map_err(|e| CliError::work(format!("--export: {}", clean(&e.to_string()))))?;
    let store = open_if_there(ctx)?;
    let fingerprint = key.as_ref().map(|k| k.fingerprint());
    let check = crate::store::exchange::check_export(
        &file.display().to_string(),
        &bytes,
        store.as_ref(),
        fingerprint.as_deref(),
    )
    .map_err(work)?;
    writeln!(
        ctx.out,
        "export {shown}: {} incidents{}",
        check.incidents,
        if check.compared_with_records {
            format!(", compared with the records in {}", ctx.db.display())
        } else {
            " (no database: the records were not compared)".to_string()
        }
    )?;
    write_notes(ctx, &check.notes)?;
    if check.ok() {
        writeln!(
            ctx.out,
            "ok: the content is what was signed{}{}",
            if key.is_some() {
                ", with the expected key"
            } else {
                ""
            },
            if check.compared_with_records {
                ", its head is in the chain and it matches the records"
            } else {
                ""
            }
        )?;
        return Ok(());
    }
    differences(ctx, "export", &check.problems)
}

/// The fleet database for a bundle check: read as the bench whose witnessed chain holds the
/// bundle's head sees it (its incidents, its names), else whole.
fn open_fleet_for_bundle(
    dir: &Path,
    ctx: &Context<'_>,
) -> Result<Box<dyn crate::store::ReportSource>, CliError> {
    let open = |bench: Option<&str>| {
        crate::store::open_reports(&ctx.db, bench).map_err(|e| match e {
            crate::store::StoreError::Invalid { .. } => CliError::usage(e.to_string()),
            other => work(other),
        })
    };
    let whole = open(None)?;
    match crate::report::bundle::head_bench(whole.as_ref(), dir)? {
        Some(bench) => open(Some(&bench)),
        None => Ok(whole),
    }
}

/// The database `--db` names, opened to read, when it exists (a bundle or an export is also
/// checked alone).
fn open_if_there(ctx: &Context<'_>) -> Result<Option<crate::store::Store>, CliError> {
    if ctx.db.exists() {
        Ok(Some(open_to_read(&ctx.db)?))
    } else {
        Ok(None)
    }
}

fn write_notes(ctx: &mut Context<'_>, notes: &[String]) -> Result<(), CliError> {
    for n in notes {
        writeln!(ctx.out, "note: {}", clean(n))?;
    }
    Ok(())
}

/// Each difference a checked copy (bundle or export) shows, then the failure that counts them.
fn differences(ctx: &mut Context<'_>, what: &str, problems: &[String]) -> Result<(), CliError> {
    for p in problems {
        writeln!(ctx.out, "DIFFERS: {}", clean(p))?;
    }
    Err(CliError::work(format!(
        "the {what} does not verify: {} difference{} (listed above)",
        problems.len(),
        if problems.len() == 1 { "" } else { "s" }
    )))
}

/// `verify` with `--db` naming the fleet database: every bench's witnessed chain, the fleet's
/// own chain of receipts, every record against its digest, the read tables against the images.
fn verify_fleet_database(args: &VerifyArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if !args.anchor.is_empty() {
        return Err(CliError::usage(
            "--anchor checks a bench's own chain; on the fleet database every bench's head is checked against its witnessed rows",
        ));
    }
    let url = ctx.db.to_string_lossy().into_owned();
    let reader = crate::store::fleet::FleetReader::open(&url, None).map_err(work)?;
    let r = reader.check().map_err(work)?;
    if args.json {
        let text =
            serde_json::to_string_pretty(&r).map_err(|e| CliError::work(format!("JSON: {e}")))?;
        writeln!(ctx.out, "{text}")?;
    } else if r.problems.is_empty() {
        for b in &r.benches {
            writeln!(
                ctx.out,
                "ok: bench {}: {} witnessed rows chain correctly; head {} ({})",
                clean(&b.bench),
                b.rows,
                b.head_seq,
                b.head_hash.get(..16).unwrap_or(&b.head_hash)
            )?;
        }
        writeln!(
            ctx.out,
            "ok: the fleet's own chain: {} receipts link correctly; head {}",
            r.receipts,
            r.fleet_head.as_deref().unwrap_or("none yet")
        )?;
        writeln!(
            ctx.out,
            "ok: {} records match their digests; {} incidents' facts and words match their images",
            r.records, r.incidents
        )?;
    }
    match r.problems.first() {
        None => Ok(()),
        Some(p) => Err(CliError::work(format!(
            "verify failed: {} problem{} on the fleet database; the first: {p}",
            r.problems.len(),
            if r.problems.len() == 1 { "" } else { "s" }
        ))),
    }
}
