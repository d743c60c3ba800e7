//! `shardlog fragmentation list|set|remove`: the table of least fragment counts of thermally
//! toughened glass per nominal thickness, kept by the lab (seeded from memory of EN 12150-1).

use super::{CliError, Context};
use shardlog_core::text::sanitize_for_terminal as clean_text;

fn work(e: crate::store::StoreError) -> CliError {
    CliError::work(e.to_string())
}

#[derive(Debug, clap::Args)]
pub struct FragmentationArgs {
    #[command(subcommand)]
    pub command: FragmentationCommand,
}

#[derive(Debug, clap::Subcommand)]
pub enum FragmentationCommand {
    /// Show the table: thickness range, least count in 50 mm × 50 mm, provenance.
    List,
    /// Add a row, or replace the row of the same thickness range.
    Set {
        /// Thinnest nominal thickness of the row, with its unit (e.g. "4 mm").
        #[arg(long)]
        from: String,
        /// Thickest nominal thickness of the row (e.g. "12 mm").
        #[arg(long)]
        to: String,
        /// The least fragment count in the 50 mm × 50 mm square.
        #[arg(long)]
        min: i64,
        /// Where the row comes from (standard, edition, table).
        #[arg(long)]
        source: String,
    },
    /// Remove the row of a thickness range.
    Remove {
        #[arg(long)]
        from: String,
        #[arg(long)]
        to: String,
    },
}

fn thickness(flag: &str, text: &str) -> Result<f64, CliError> {
    shardlog_core::units::parse_positive(text, shardlog_core::units::Dimension::Length)
        .map_err(|e| CliError::usage(format!("{flag}: {e} (e.g. \"4 mm\")")))
}

pub fn run(args: FragmentationArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    use shardlog_core::fracture::fragmentation::{range_text, FragmentationMinimum};
    let refused = |e: crate::store::StoreError| match e {
        crate::store::StoreError::Invalid { .. } => CliError::usage(e.to_string()),
        other => CliError::work(other.to_string()),
    };
    match args.command {
        FragmentationCommand::List => {
            let s = super::records::open_to_read(&ctx.db)?;
            for m in s.fragmentation_minimums().map_err(work)? {
                writeln!(
                    ctx.out,
                    "{:<12} at least {:>3} fragments in 50 mm × 50 mm  ({})",
                    range_text(&m),
                    m.min_count,
                    clean_text(&m.provenance, false)
                )?;
            }
        }
        FragmentationCommand::Set {
            from,
            to,
            min,
            source,
        } => {
            let row = FragmentationMinimum {
                thickness_from_m: thickness("--from", &from)?,
                thickness_to_m: thickness("--to", &to)?,
                min_count: min,
                provenance: source.trim().to_string(),
            };
            let mut s = super::records::open(&ctx.db)?;
            s.set_fragmentation_minimum(&row, &super::records::edge_stamp())
                .map_err(refused)?;
            writeln!(
                ctx.out,
                "set {}: at least {} fragments",
                range_text(&row),
                row.min_count
            )?;
        }
        FragmentationCommand::Remove { from, to } => {
            let (a, b) = (thickness("--from", &from)?, thickness("--to", &to)?);
            let mut s = super::records::open(&ctx.db)?;
            s.remove_fragmentation_minimum(a, b, &super::records::edge_stamp())
                .map_err(refused)?;
            writeln!(ctx.out, "removed the row for {from} – {to}")?;
        }
    }
    Ok(())
}
