//! `export`: the records read out as JSON or CSV, signed with the bench's key, written as
//! they are read (to a file written whole then renamed into place, or to standard output).

use std::path::PathBuf;

use super::records::{
    open_records, open_to_read, refuse_database_files, work, write_whole, FilterArgs,
};
use super::{CliError, Context};
use crate::store;

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ExportFormat {
    Csv,
    Json,
}

#[derive(Debug, clap::Args)]
pub struct ExportArgs {
    #[arg(long, value_enum)]
    pub format: ExportFormat,
    #[command(flatten)]
    pub filter: FilterArgs,
    /// Write to FILE instead of standard output (written whole, then renamed into place).
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
    /// Only the incidents and reference data of this bench (on the fleet database; a bench
    /// file takes only its own code).
    #[arg(long, value_name = "CODE")]
    pub bench: Option<String>,
}

pub fn export(args: ExportArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if store::is_fleet_url(&ctx.db) {
        return export_from_fleet(args, ctx);
    }
    if args.bench.is_some() {
        // a bench file takes only its own code: refused here as on the other commands
        open_records(&ctx.db, args.bench.as_deref())?;
    }
    super::key::make_key_if_missing(&ctx.db);
    let s = open_to_read(&ctx.db)?;
    let filter = args.filter.to_filter(&s)?;
    let key_dir = super::key::key_dir();
    // an incident whose row cannot be read is left out and named; the others are exported;
    // the head the records were read at goes with them, signed
    // written as the incidents are read: a large export is never held whole
    let export = |w: &mut dyn std::io::Write| match args.format {
        ExportFormat::Json => s.export_json_signed(&filter, &key_dir, w),
        ExportFormat::Csv => s.export_csv_signed(&filter, &key_dir, w),
    };
    let out = match &args.output {
        None => {
            let mut w = ReaderWatch {
                inner: std::io::BufWriter::new(&mut *ctx.out),
                closed: false,
            };
            let out = match export(&mut w) {
                Ok(out) => out,
                // the reader went away (`| head`): quiet, as for any other output
                Err(_) if w.closed => {
                    return Err(std::io::Error::from(std::io::ErrorKind::BrokenPipe).into())
                }
                Err(e) => return Err(work(e)),
            };
            std::io::Write::flush(&mut w.inner)?;
            out
        }
        Some(path) => {
            refuse_database_files(path, &ctx.db, "-o")?;
            // an export is a copy of the records: owner-only
            store::write_atomically_with(path, true, export).map_err(|e| {
                CliError::work(format!(
                    "{}: not written ({e}); a file already there is unchanged",
                    path.display()
                ))
            })?
        }
    };
    // to stderr, and only beside a file: the export itself may be on standard output, and
    // a pipe gets nothing but the data
    match &out.signed_head {
        Some(_) if args.output.is_none() => {}
        Some(h) => eprintln!(
            "{} incident{} exported; audit head {} signed with key {} (a recipient checks it with: shardlog verify --export FILE)",
            out.incidents,
            if out.incidents == 1 { "" } else { "s" },
            h.anchor(),
            h.fingerprint
        ),
        None => eprintln!("{}", super::key::unsigned_note(&s)),
    }
    damaged_left_out(out.damaged)
}

/// A writer that notes whether its reader went away (a closed pipe), which the export
/// reports as a failure of its own writing.
struct ReaderWatch<W: std::io::Write> {
    inner: W,
    closed: bool,
}

impl<W: std::io::Write> std::io::Write for ReaderWatch<W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let r = self.inner.write(buf);
        if matches!(&r, Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe) {
            self.closed = true;
        }
        r
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush()
    }
}

/// `export` on the fleet database: the same documents as the bench file's, unsigned (the
/// fleet holds no bench's key; its witnessed heads are checked by `verify` on the fleet).
fn export_from_fleet(args: ExportArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let s = open_records(&ctx.db, args.bench.as_deref())?;
    let s = s.as_ref();
    let filter = args.filter.to_filter(s)?;
    let mut buf: Vec<u8> = Vec::new();
    // an incident whose row cannot be read is left out and named; the others are exported
    let damaged = match args.format {
        ExportFormat::Json => {
            let (text, damaged) = s.export_json_readable(&filter).map_err(work)?;
            buf.extend_from_slice(text.as_bytes());
            damaged
        }
        ExportFormat::Csv => s.export_csv_readable(&filter, &mut buf).map_err(work)?.1,
    };
    match args.output {
        None => ctx.out.write_all(&buf)?,
        Some(path) => {
            refuse_database_files(&path, &ctx.db, "-o")?;
            // an export is a copy of the records: owner-only
            write_whole(&path, &buf, true)?
        }
    }
    damaged_left_out(damaged)
}

fn damaged_left_out<D: std::fmt::Display>(damaged: Vec<D>) -> Result<(), CliError> {
    if damaged.is_empty() {
        return Ok(());
    }
    let names: Vec<String> = damaged.iter().map(|d| d.to_string()).collect();
    Err(CliError::work(format!(
        "{} damaged incident{} left out of the export, the others were written: {}",
        damaged.len(),
        if damaged.len() == 1 { "" } else { "s" },
        names.join("; ")
    )))
}
