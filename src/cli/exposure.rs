//! `shardlog exposure import FILE.csv` and `shardlog exposure list`: panes in service, the
//! denominator of every rate, from their own CSV file.

use std::path::PathBuf;

use super::records::{edge_stamp, open};
use super::{CliError, Context};
use crate::store::exchange::{exposure_csv_row, ImportOptions, EXPOSURE_COLUMNS};

#[derive(Debug, clap::Args)]
pub struct ExposureArgs {
    #[command(subcommand)]
    pub command: ExposureCommand,
}

#[derive(Debug, clap::Subcommand)]
pub enum ExposureCommand {
    /// Import panes in service from CSV (columns supplier, product, lot, site, installed_on,
    /// removed_on, panes); all or nothing, every problem listed at once.
    Import(ImportArgs),
    /// List the exposure rows (as a table, or as CSV that `exposure import` reads).
    List(ListArgs),
}

#[derive(Debug, clap::Args)]
pub struct ImportArgs {
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    /// Check and report without writing anything.
    #[arg(long)]
    pub dry_run: bool,
    /// Refuse supplier, product, lot and site codes the database does not define.
    #[arg(long)]
    pub strict: bool,
}

#[derive(Debug, clap::Args)]
pub struct ListArgs {
    /// Print CSV (the columns `exposure import` reads) instead of a table.
    #[arg(long)]
    pub csv: bool,
}

pub fn run(args: ExposureArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    match args.command {
        ExposureCommand::Import(a) => import(a, ctx),
        ExposureCommand::List(a) => list(a, ctx),
    }
}

fn import(args: ImportArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let name = args.file.display().to_string();
    let bytes = std::fs::read(&args.file).map_err(|e| CliError::work(format!("{name}: {e}")))?;
    let mut store = open(&ctx.db)?;
    let options = ImportOptions {
        dry_run: args.dry_run,
        strict: args.strict,
        ..ImportOptions::default()
    };
    let result = store.import_exposure_csv(&bytes, options, &edge_stamp());
    super::records::report_import(ctx, &name, result, false)
}

fn list(args: ListArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let store = open(&ctx.db)?;
    let rows = store
        .exposure()
        .map_err(|e| CliError::work(e.to_string()))?;
    if args.csv {
        writeln!(ctx.out, "{}", EXPOSURE_COLUMNS.join(","))?;
        for e in &rows {
            writeln!(ctx.out, "{}", exposure_csv_row(e))?;
        }
        return Ok(());
    }
    if rows.is_empty() {
        writeln!(
            ctx.out,
            "no exposure recorded; `shardlog exposure import FILE.csv` adds panes in service"
        )?;
        return list_pulled(&store, ctx);
    }
    writeln!(
        ctx.out,
        "{:<12} {:<12} {:<10} {:<10} {:<10} {:<10} {:>8}",
        "supplier", "product", "lot", "site", "installed", "removed", "panes"
    )?;
    let mut total = 0i64;
    for e in &rows {
        total += e.panes;
        writeln!(
            ctx.out,
            "{}",
            row_text(
                &e.supplier,
                [&e.product, &e.lot, &e.site],
                e.installed_on,
                e.removed_on,
                e.panes
            )
        )?;
    }
    writeln!(ctx.out, "{} rows, {total} panes", rows.len())?;
    list_pulled(&store, ctx)
}

fn clean(s: &str) -> String {
    shardlog_core::text::sanitize_for_terminal(s, false)
}

/// One exposure row as `exposure list` prints it (own and pulled rows alike).
fn row_text(
    supplier: &str,
    [product, lot, site]: [&Option<String>; 3],
    installed: chrono::NaiveDate,
    removed: Option<chrono::NaiveDate>,
    panes: i64,
) -> String {
    let or_dash = |v: &Option<String>| clean(v.as_deref().unwrap_or("—"));
    format!(
        "{:<12} {:<12} {:<10} {:<10} {:<10} {:<10} {:>8}",
        clean(supplier),
        or_dash(product),
        or_dash(lot),
        or_dash(site),
        installed,
        removed.map_or_else(|| "in service".to_string(), |d| d.to_string()),
        panes
    )
}

/// Other benches' rows a sync pulled, each marked with its bench: shown, never counted in
/// this bench's rates (nor written by `--csv`, which is this bench's own for import).
fn list_pulled(store: &crate::store::Store, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let rows = store
        .pulled_exposure()
        .map_err(|e| CliError::work(e.to_string()))?;
    if rows.is_empty() {
        return Ok(());
    }
    writeln!(
        ctx.out,
        "\nfrom other benches of the fleet (not in this bench's rates):"
    )?;
    writeln!(
        ctx.out,
        "{:<8} {:<12} {:<12} {:<10} {:<10} {:<10} {:<10} {:>8}",
        "bench", "supplier", "product", "lot", "site", "installed", "removed", "panes"
    )?;
    let mut total = 0i64;
    for e in &rows {
        total += e.panes;
        writeln!(
            ctx.out,
            "{:<8} {}",
            clean(&e.bench),
            row_text(
                &e.supplier,
                [&e.product, &e.lot, &e.site],
                e.installed_on,
                e.removed_on,
                e.panes
            )
        )?;
    }
    writeln!(
        ctx.out,
        "{} rows of other benches, {total} panes",
        rows.len()
    )?;
    Ok(())
}
