//! Record commands: init, import, export, list, show, backup, demo (verify is in `verify`).

use std::path::{Path, PathBuf};

use chrono::{NaiveDate, Utc};

use super::codes::{resolve_opt, Field};
use super::{actor, parse_day, sanitize_for_terminal, CliError, Context};
use crate::store::exchange::ImportOptions;
use crate::store::{
    self, Filter, PageRequest, RecordSource, Sort, SortColumn, Stamp, Store, StoreError,
};
use shardlog_core::text::stress_or_dash;

/// One field of `list` or `show` on its line: a newline or tab inside it becomes a space, so
/// that the table keeps its shape; every other character is written as stored. On a
/// terminal the output passes [`super::TerminalGuard`], which shows control characters as
/// visible symbols and says so on stderr; to a pipe or a file the bytes are the record's.
pub(crate) fn clean(s: &str) -> String {
    s.replace(['\n', '\t'], " ")
}

/// The actor and time of a change, taken here at the edge: [`actor`] and the system clock.
pub fn edge_stamp() -> Stamp {
    Stamp::new(actor(), Utc::now())
}

pub(crate) fn work(e: StoreError) -> CliError {
    CliError::work(e.to_string())
}

pub(crate) fn open(db: &Path) -> Result<Store, CliError> {
    Store::open_existing(db).map_err(work)
}

/// Open the database for a command that only reads it (list, show, export, verify, reports,
/// backup): nothing is written, so it works on a full disk.
pub(crate) fn open_to_read(db: &Path) -> Result<Store, CliError> {
    Store::open_for_reading(db).map_err(work)
}

/// Open the records `--db` names only to read them: a bench file, or the fleet database for
/// a `postgres://` URL (read-only). `bench`: one bench's records of the fleet.
pub(crate) fn open_records(
    db: &Path,
    bench: Option<&str>,
) -> Result<Box<dyn RecordSource>, CliError> {
    store::open_records(db, bench).map_err(|e| match e {
        StoreError::Invalid { .. } => CliError::usage(e.to_string()),
        other => work(other),
    })
}

/// Filters shared by export and list. Each code flag takes a code or its label (a
/// supplier's or site's name), in any case; an unknown one is a usage error listing the valid.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct FilterArgs {
    /// Case status, code or label (e.g. cause_assigned or "cause assigned").
    #[arg(long, value_name = "S")]
    pub status: Option<String>,
    /// Cause, code or label (e.g. thermal, nickel_sulfide, "impact"); `none` for the
    /// incidents with no cause recorded yet.
    #[arg(long, value_name = "C")]
    pub cause: Option<String>,
    /// Origin type of the last examination, code or label (e.g. inclusion_nis).
    #[arg(long, value_name = "T")]
    pub origin_type: Option<String>,
    /// Supplier, code or name.
    #[arg(long, value_name = "S")]
    pub supplier: Option<String>,
    /// Lot code.
    #[arg(long, value_name = "L")]
    pub lot: Option<String>,
    /// Site, code or name.
    #[arg(long, value_name = "S")]
    pub site: Option<String>,
    /// Found on or after (YYYY-MM-DD).
    #[arg(long, value_name = "DATE")]
    pub since: Option<String>,
    /// Found on or before (YYYY-MM-DD).
    #[arg(long, value_name = "DATE")]
    pub until: Option<String>,
}

fn parse_date(flag: &str, v: &str) -> Result<NaiveDate, CliError> {
    parse_day(v).ok_or_else(|| {
        CliError::usage(format!(
            "--{flag}: \"{v}\" is not a date; expected YYYY-MM-DD such as 2026-03-14"
        ))
    })
}

impl FilterArgs {
    /// The checked filter: dates parsed, every code resolved against the database.
    pub(crate) fn to_filter(&self, store: &dyn RecordSource) -> Result<Filter, CliError> {
        let since = self
            .since
            .as_deref()
            .map(|v| parse_date("since", v))
            .transpose()?;
        let until = self
            .until
            .as_deref()
            .map(|v| parse_date("until", v))
            .transpose()?;
        if let (Some(a), Some(b)) = (since, until) {
            if a > b {
                return Err(CliError::usage(format!("--since {a} is after --until {b}")));
            }
        }
        let code = |field, flag, v: &Option<String>| resolve_opt(store, field, flag, v);
        Ok(Filter {
            status: code(Field::Status, "--status", &self.status)?,
            cause: code(Field::Cause, "--cause", &self.cause)?,
            origin_type: code(Field::OriginType, "--origin-type", &self.origin_type)?,
            supplier: code(Field::Supplier, "--supplier", &self.supplier)?,
            lot: code(Field::Lot, "--lot", &self.lot)?,
            site: code(Field::Site, "--site", &self.site)?,
            since,
            until,
            ..Filter::default()
        })
    }
}

#[derive(Debug, clap::Args)]
pub struct InitArgs {
    /// This bench's code in the fleet (2 to 8 letters or digits): new references carry it.
    #[arg(long, value_name = "CODE")]
    pub bench: Option<String>,
}

pub fn init(args: InitArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let code = match &args.bench {
        Some(c) => Some(crate::store::fleet::check_bench_code(c).map_err(CliError::usage)?),
        None => None,
    };
    let existed = ctx.db.exists();
    let mut s = Store::open(&ctx.db).map_err(work)?;
    if let Some(code) = &code {
        s.set_bench_code(code).map_err(work)?;
        writeln!(ctx.out, "bench code {code}")?;
    }
    let v = s.schema_version().map_err(work)?;
    if existed {
        writeln!(
            ctx.out,
            "{} is already a shardlog database (schema {v}); nothing was changed",
            ctx.db.display()
        )?;
    } else {
        writeln!(
            ctx.out,
            "created {} (schema {v}); attachments will be kept in {}",
            ctx.db.display(),
            s.files_dir()
                .map(|p| p.display().to_string())
                .unwrap_or_default()
        )?;
        if let Some(k) = super::key::ensure_key(&s)? {
            writeln!(
                ctx.out,
                "signing key {} (private key in {})",
                k.public.fingerprint(),
                k.private_file.display()
            )?;
        }
    }
    Ok(())
}

#[derive(Debug, clap::Args)]
pub struct ImportArgs {
    /// A CSV (flat view) or JSON (full export) file.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    /// Check and report without writing anything.
    #[arg(long)]
    pub dry_run: bool,
    /// Refuse site, asset, supplier, product and lot codes the database and file do not define.
    #[arg(long)]
    pub strict: bool,
    /// A folder with the files of the attachment rows, named by their SHA-256 (a database's
    /// `.files` folder); each is checked against its hash and copied in.
    #[arg(long, value_name = "DIR")]
    pub attachments: Option<PathBuf>,
    /// Import incidents although one with the same asset, position and date found exists.
    #[arg(long)]
    pub allow_duplicates: bool,
}

pub fn import(args: ImportArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let meta = std::fs::metadata(&args.file)
        .map_err(|e| CliError::work(format!("{}: {e}", args.file.display())))?;
    if !meta.is_file() {
        return Err(CliError::work(format!(
            "{}: is not a file",
            args.file.display()
        )));
    }
    if meta.len() > store::exchange::MAX_IMPORT_BYTES as u64 {
        return Err(CliError::work(format!(
            "{}: larger than {} MB; split it",
            args.file.display(),
            store::exchange::MAX_IMPORT_BYTES >> 20
        )));
    }
    let bytes = std::fs::read(&args.file)
        .map_err(|e| CliError::work(format!("{}: {e}", args.file.display())))?;
    let mut s = open(&ctx.db)?;
    let name = args.file.display().to_string();
    let options = ImportOptions {
        dry_run: args.dry_run,
        strict: args.strict,
        attachments: args.attachments.clone(),
        allow_duplicates: args.allow_duplicates,
    };
    let meter = super::progress::Meter::on_stderr();
    s.set_progress(meter.as_ref().map(|m| m.callback()));
    let result = s.import_bytes(&name, &bytes, options, &edge_stamp());
    drop(meter);
    report_import(ctx, &name, result, true)
}

/// The one line an import prints (incidents only for a records import), or its refusal.
pub(crate) fn report_import(
    ctx: &mut Context<'_>,
    name: &str,
    result: Result<
        Result<store::exchange::ImportSummary, store::exchange::ImportRejected>,
        StoreError,
    >,
    with_incidents: bool,
) -> Result<(), CliError> {
    match result.map_err(|e| CliError::work(format!("{name}: import failed: {e}")))? {
        Ok(sum) => {
            let incidents = if with_incidents {
                format!(
                    "{} incident{}, ",
                    sum.incidents,
                    if sum.incidents == 1 { "" } else { "s" }
                )
            } else {
                String::new()
            };
            writeln!(
                ctx.out,
                "{} {incidents}{} reference record{} ({} already present){}",
                if sum.dry_run {
                    "would import"
                } else {
                    "imported"
                },
                sum.reference_records,
                if sum.reference_records == 1 { "" } else { "s" },
                sum.already_present,
                if sum.dry_run {
                    "; nothing was written (dry run)"
                } else {
                    ""
                }
            )?;
            Ok(())
        }
        Err(rej) => Err(CliError::work(format!(
            "{name}: {}",
            rej.to_string().trim_end()
        ))),
    }
}

/// An output path must never be the database itself, its journal files or its attachment
/// folder: writing there would destroy the records. Compared after resolving links and `..`.
pub fn refuse_database_files(out: &Path, db: &Path, flag: &str) -> Result<(), CliError> {
    fn resolved(p: &Path) -> Option<std::path::PathBuf> {
        if let Ok(c) = p.canonicalize() {
            return Some(c);
        }
        let parent = match p.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.canonicalize().ok()?,
            _ => std::env::current_dir().ok()?,
        };
        Some(parent.join(p.file_name()?))
    }
    let (Some(out_r), Some(db_r)) = (resolved(out), resolved(db)) else {
        return Ok(());
    };
    let mut guarded = vec![db_r.clone()];
    for suffix in ["-wal", "-shm", "-journal", ".files"] {
        let mut name = db_r.as_os_str().to_os_string();
        name.push(suffix);
        guarded.push(std::path::PathBuf::from(name));
    }
    if guarded
        .iter()
        .any(|g| out_r == *g || out_r.starts_with(&guarded[4]))
    {
        return Err(CliError::work(format!(
            "{flag}: {} is the database or one of its own files; choose another path",
            out.display()
        )));
    }
    Ok(())
}

/// Write a file completely under a temporary name in the same folder, flush it, then rename
/// it into place: a failed or interrupted write never replaces or truncates a good file, and
/// leaves no temporary file behind. Owner-only (0600) when `private`, else 0644.
pub fn write_whole(path: &Path, bytes: &[u8], private: bool) -> Result<(), CliError> {
    store::write_atomically(path, bytes, private).map_err(|e| {
        CliError::work(format!(
            "{}: not written ({e}); a file already there is unchanged",
            path.display()
        ))
    })
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum SortArg {
    Found,
    Ref,
    Stress,
    Status,
}

#[derive(Debug, clap::Args)]
pub struct ListArgs {
    #[command(flatten)]
    pub filter: FilterArgs,
    /// Free text over references, positions, descriptions and notes.
    #[arg(long, value_name = "TEXT")]
    pub search: Option<String>,
    /// Only the incidents this bench owns (on the fleet database; a bench file takes only
    /// its own code).
    #[arg(long, value_name = "CODE")]
    pub bench: Option<String>,
    /// At most N incidents; 0 lists every match (read page by page, at constant memory).
    #[arg(long, value_name = "N", default_value_t = 50, conflicts_with = "all")]
    pub limit: u64,
    /// Every match (the same as --limit 0).
    #[arg(long)]
    pub all: bool,
    /// Sort column (found: the date found, as the interface sorts).
    #[arg(long, value_enum, default_value_t = SortArg::Found)]
    pub sort: SortArg,
    /// Newest / largest first (the default, as in the interface).
    #[arg(long, conflicts_with = "asc")]
    pub desc: bool,
    /// Oldest / smallest first.
    #[arg(long)]
    pub asc: bool,
    /// Print a JSON array instead of a table (codes, not labels; `stress_mpa` is the net
    /// stress at the origin).
    #[arg(long)]
    pub json: bool,
}

fn cell(s: &str, width: usize) -> String {
    let text = clean(s);
    let n = text.chars().count();
    if n <= width {
        format!("{text}{}", " ".repeat(width - n))
    } else {
        let mut t: String = text.chars().take(width.saturating_sub(1)).collect();
        t.push('…');
        t
    }
}

/// Rows read from the database at a time when listing more than one page.
const LIST_PAGE: u32 = 1000;

/// Codes to labels for the text output of `list` and `show` (`--json` keeps the codes).
pub(crate) struct Readable {
    labels: std::collections::HashMap<(store::LookupKind, String), String>,
}

impl Readable {
    pub(crate) fn load(s: &dyn RecordSource) -> Result<Self, CliError> {
        let mut labels = std::collections::HashMap::new();
        for e in s.all_lookups().map_err(work)? {
            labels.insert((e.kind, e.code), e.label);
        }
        Ok(Readable { labels })
    }

    /// The label of a code, the code itself when the list has no label for it.
    pub(crate) fn label(&self, kind: store::LookupKind, code: &str) -> String {
        self.labels
            .get(&(kind, code.to_string()))
            .cloned()
            .unwrap_or_else(|| code.to_string())
    }

    fn label_or_dash(&self, kind: store::LookupKind, code: &Option<String>) -> String {
        code.as_deref()
            .map(|c| clean(&self.label(kind, c)))
            .unwrap_or_else(|| "—".into())
    }
}

fn list_row_text(r: &store::LogRow, names: &Readable) -> String {
    let where_ = match (&r.asset, r.position.is_empty()) {
        (Some(a), false) => format!("{a} / {}", r.position),
        (Some(a), true) => a.clone(),
        (None, _) => r.position.clone(),
    };
    let stress = r
        .stress_mpa
        .map(|m| format!("{} MPa", shardlog_core::units::fmt_sig(m, 3)))
        .unwrap_or_else(|| "—".into());
    format!(
        "{} {} {} {} {} {} {} {} {:>10}",
        cell(&r.reference, 14),
        cell(
            &match &r.damaged {
                Some(_) => "DAMAGED".to_string(),
                None => r.occurred.to_string(),
            },
            10
        ),
        cell(&where_, 24),
        cell(r.product.as_deref().unwrap_or("—"), 10),
        cell(r.supplier.as_deref().unwrap_or("—"), 10),
        cell(r.lot.as_deref().unwrap_or("—"), 8),
        cell(&names.label(store::LookupKind::Status, &r.status), 17),
        cell(
            &names.label_or_dash(store::LookupKind::CauseCategory, &r.cause),
            24
        ),
        stress
    )
}

pub fn list(args: ListArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let limit = if args.all { 0 } else { args.limit };
    let s = open_records(&ctx.db, args.bench.as_deref())?;
    let s = s.as_ref();
    let mut filter = args.filter.to_filter(s)?;
    filter.text = args.search.clone();
    let sort = Sort {
        column: match args.sort {
            SortArg::Found => SortColumn::Found,
            SortArg::Ref => SortColumn::Reference,
            SortArg::Stress => SortColumn::Stress,
            SortArg::Status => SortColumn::Status,
        },
        descending: !args.asc,
    };
    let names = Readable::load(s)?;
    if !args.json {
        writeln!(
            ctx.out,
            "{} {} {} {} {} {} {} {} {:>10}",
            cell("ref", 14),
            cell("found", 10),
            cell("asset / position", 24),
            cell("product", 10),
            cell("supplier", 10),
            cell("lot", 8),
            cell("status", 17),
            cell("cause", 24),
            "net stress"
        )?;
    } else {
        write!(ctx.out, "[")?;
    }
    // page by page: only one page is held at a time, whatever the number of matches
    let mut shown: u64 = 0;
    let mut total = None;
    let mut more_than_total = false;
    let mut after = None;
    loop {
        let want = match limit {
            0 => u64::from(LIST_PAGE),
            n => (n - shown).min(u64::from(LIST_PAGE)),
        };
        let page = s
            .list(
                &filter,
                sort,
                &PageRequest {
                    limit: want as u32,
                    after: after.take(),
                    with_total: !args.json && shown == 0,
                },
            )
            .map_err(work)?;
        if shown == 0 {
            total = page.total;
            more_than_total = page.more_than_total;
        }
        for r in &page.rows {
            if let Some(found) = &r.damaged {
                eprintln!(
                    "shardlog: incident {}: damaged, its date found ({}) cannot be read; listed as DAMAGED",
                    sanitize_for_terminal(&r.reference, false),
                    sanitize_for_terminal(found, false)
                );
            }
            if args.json {
                let text = serde_json::to_string_pretty(r)
                    .map_err(|e| CliError::work(format!("JSON: {e}")))?;
                let indented = text.replace('\n', "\n  ");
                write!(
                    ctx.out,
                    "{}\n  {indented}",
                    if shown == 0 { "" } else { "," }
                )?;
            } else {
                writeln!(ctx.out, "{}", list_row_text(r, &names))?;
            }
            shown += 1;
        }
        match page.next {
            Some(n) if limit == 0 || shown < limit => after = Some(n),
            _ => break,
        }
    }
    if args.json {
        writeln!(ctx.out, "{}]", if shown == 0 { "" } else { "\n" })?;
        return Ok(());
    }
    let total = total.unwrap_or(shown);
    writeln!(
        ctx.out,
        "{} of {}{} incident{} shown, {}",
        shown,
        // a filter by status or words counts its matches up to a cap (store::COUNT_CAP)
        if more_than_total { "more than " } else { "" },
        total,
        if total == 1 && !more_than_total {
            ""
        } else {
            "s"
        },
        match (args.sort, args.asc) {
            (SortArg::Found, false) => "newest first",
            (SortArg::Found, true) => "oldest first",
            (SortArg::Stress, false) => "largest net stress first",
            (SortArg::Stress, true) => "smallest net stress first",
            (_, false) => "in reverse order",
            (_, true) => "in order",
        }
    )?;
    Ok(())
}

#[derive(Debug, clap::Args)]
pub struct ShowArgs {
    /// Reference (BR-YYMMDD-NNNN) or id.
    #[arg(value_name = "REF")]
    pub reference: String,
    /// Print the full record as JSON.
    #[arg(long)]
    pub json: bool,
}

/// An optional text for the reader, "—" when there is none.
fn clean_or_dash(x: &Option<String>) -> String {
    x.as_deref().map(clean).unwrap_or_else(|| "—".into())
}

/// One examination of `show`: who and when, the readings, the flaw, the stored result.
fn write_examination(
    out: &mut dyn std::io::Write,
    names: &Readable,
    number: usize,
    e: &store::Examination,
) -> Result<(), CliError> {
    writeln!(
        out,
        "  examination {} by {} on {}: origin type {}",
        number,
        if e.analyst.is_empty() {
            "—".into()
        } else {
            clean(&e.analyst)
        },
        e.examined_on
            .map(|d| d.to_string())
            .unwrap_or_else(|| "—".into()),
        names.label_or_dash(store::LookupKind::OriginType, &e.origin_type)
    )?;
    for r in &e.readings {
        writeln!(
            out,
            "    {:<12} {}{}",
            clean(&names.label(store::LookupKind::Boundary, &r.boundary)),
            clean(&r.radius.display()),
            r.magnification
                .map(|m| format!(" at {}×", shardlog_core::units::fmt_sig(m, 3)))
                .unwrap_or_default()
                + &r.viewing
                    .as_ref()
                    .map(|v| format!(
                        ", {}",
                        clean(&names.label(store::LookupKind::ViewingMode, v))
                    ))
                    .unwrap_or_default()
        )?;
    }
    if let Some(f) = &e.flaw {
        if let Some(d) = &f.depth {
            writeln!(
                out,
                "    flaw depth   {} {}",
                clean(&d.display()),
                clean(&f.shape)
            )?;
        }
        if let Some(w) = &f.width {
            writeln!(out, "    flaw width   {}", clean(&w.display()))?;
        }
    }
    if let Some(res) = &e.result {
        writeln!(
            out,
            "    result: net stress at the origin {} (95 % {} to {}), applied stress {}, by {}",
            stress_or_dash(res.stress_pa),
            stress_or_dash(res.stress_low_pa),
            stress_or_dash(res.stress_high_pa),
            stress_or_dash(res.applied_stress_pa),
            clean(&res.code_version)
        )?;
        for h in store::bench_record::saved_hypotheses(res) {
            writeln!(
                out,
                "    hypothesis   {}: {}; {} by {}",
                clean(&h.kind),
                if h.inputs.is_empty() {
                    "inputs not recorded".into()
                } else {
                    clean(&h.inputs)
                },
                stress_or_dash(h.stress_pa),
                if h.method.is_empty() {
                    "a method not recorded".into()
                } else {
                    clean(&h.method)
                }
            )?;
            writeln!(
                out,
                "    verdict      {}",
                h.verdict
                    .as_deref()
                    .map(clean)
                    .unwrap_or_else(|| "none (no measured stress to compare)".into())
            )?;
        }
    }
    Ok(())
}

pub fn show(args: ShowArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let s = open_records(&ctx.db, None)?;
    let s = s.as_ref();
    let inc = s.get(&args.reference).map_err(work)?;
    let names = Readable::load(s)?;
    if args.json {
        let text =
            serde_json::to_string_pretty(&inc).map_err(|e| CliError::work(format!("JSON: {e}")))?;
        writeln!(ctx.out, "{text}")?;
        return Ok(());
    }
    let out = &mut *ctx.out;
    writeln!(
        out,
        "{}  (revision {}, id {})",
        clean(&inc.reference),
        inc.revision,
        inc.id
    )?;
    writeln!(
        out,
        "  status      {}",
        clean(&names.label(store::LookupKind::Status, &inc.status))
    )?;
    writeln!(
        out,
        "  found       {}{}",
        inc.found_on,
        inc.broken_on
            .map(|d| format!(", broken {d}"))
            .unwrap_or_default()
    )?;
    writeln!(
        out,
        "  asset       {}  position {}",
        clean_or_dash(&inc.asset),
        clean(&inc.position)
    )?;
    writeln!(out, "  site        {}", clean_or_dash(&inc.site))?;
    if let Some(tc) = inc.environment.temperature_c {
        writeln!(
            out,
            "  temperature {} °C",
            shardlog_core::units::fmt_sig(tc, 3)
        )?;
    }
    writeln!(
        out,
        "  glass       supplier {}, product {}, lot {}, {}",
        clean_or_dash(&inc.glass.supplier),
        clean_or_dash(&inc.glass.product),
        clean_or_dash(&inc.glass.lot),
        clean(&names.label(store::LookupKind::Makeup, &inc.glass.makeup))
    )?;
    for (i, p) in inc.glass.plies.iter().enumerate() {
        writeln!(
            out,
            "    ply {}    {} {} {}",
            i + 1,
            names.label_or_dash(store::LookupKind::Material, &p.material),
            names.label_or_dash(store::LookupKind::TemperClass, &p.temper),
            p.thickness_m
                .map(|x| format!("{} mm", shardlog_core::units::fmt_sig(x * 1e3, 3)))
                .unwrap_or_default()
        )?;
    }
    if let Some(loc) = &inc.pattern.origin_location {
        writeln!(
            out,
            "  origin at   {}",
            clean(&names.label(store::LookupKind::OriginLocation, loc))
        )?;
    }
    super::practice::write_practice(out, s, &inc)?;
    for (i, e) in inc.examinations.iter().enumerate() {
        write_examination(out, &names, i + 1, e)?;
    }
    if let Some(c) = &inc.cause {
        writeln!(
            out,
            "  cause       {} ({}, responsibility {})",
            clean(&names.label(store::LookupKind::CauseCategory, &c.category)),
            clean(&names.label(store::LookupKind::Confidence, &c.confidence)),
            clean(&names.label(store::LookupKind::Responsibility, &c.responsibility))
        )?;
        for f in &c.factors {
            writeln!(out, "    factor    {}", clean(f))?;
        }
    }
    for c in &inc.custody {
        writeln!(
            out,
            "  custody     {} {} by {} {}",
            c.at.format("%Y-%m-%d %H:%M"),
            clean(&names.label(store::LookupKind::CustodyAction, &c.action)),
            clean(&c.who),
            clean(&c.location)
        )?;
    }
    for a in &inc.attachments {
        writeln!(
            out,
            "  attachment  {} ({} bytes) sha256 {}",
            clean(&a.file_name),
            a.size_bytes,
            a.sha256
        )?;
    }
    if !inc.description.is_empty() {
        writeln!(out, "  description {}", &inc.description)?;
    }
    if !inc.notes.is_empty() {
        writeln!(out, "  notes       {}", &inc.notes)?;
    }
    Ok(())
}

#[derive(Debug, clap::Args)]
pub struct BackupArgs {
    /// The new database file (must not exist).
    #[arg(value_name = "DEST")]
    pub dest: PathBuf,
}

pub fn backup(args: BackupArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    refuse_database_files(&args.dest, &ctx.db, "DEST")?;
    super::leftovers::clear_leftovers(&args.dest);
    let s = open_to_read(&ctx.db)?;
    let meter = super::progress::Meter::on_stderr();
    s.set_progress(meter.as_ref().map(|m| m.callback()));
    let r = s.backup(&args.dest);
    drop(meter);
    let r = r.map_err(|e| {
        CliError::work(format!(
            "backup to {} failed: {e}; nothing was left at {0}",
            args.dest.display()
        ))
    })?;
    match r.first_problem {
        None => writeln!(
            ctx.out,
            "backed up to {}: integrity check ok, audit chain ok ({} rows, head {})",
            args.dest.display(),
            r.audit_rows,
            r.head
        )?,
        Some(p) => {
            return Err(CliError::work(format!(
                "backed up to {}, but the copy does not verify: {p}",
                args.dest.display()
            )))
        }
    }
    Ok(())
}

#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// The database file to create (must not exist).
    #[arg(long, value_name = "PATH")]
    pub out: PathBuf,
    /// Number of incidents.
    #[arg(long, value_name = "N", default_value_t = crate::demo::DEFAULT_INCIDENTS)]
    pub incidents: u64,
    /// Seed of the generator.
    #[arg(long, value_name = "S", default_value_t = crate::demo::DEFAULT_SEED)]
    pub seed: u64,
    /// Make it a bench with this code (its references carry it; its keys are its own).
    #[arg(long, value_name = "CODE")]
    pub bench: Option<String>,
}

pub fn demo(args: DemoArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if args.incidents == 0 || args.incidents > 5_000_000 {
        return Err(CliError::usage(
            "--incidents: expected a number from 1 to 5000000",
        ));
    }
    if args.out.exists() {
        return Err(CliError::usage(format!(
            "--out: {} already exists; the demo writes a new file",
            args.out.display()
        )));
    }
    super::leftovers::clear_leftovers(&args.out);
    let started = std::time::Instant::now();
    if let Some(code) = &args.bench {
        crate::store::fleet::check_bench_code(code).map_err(CliError::usage)?;
    }
    let meter = super::progress::Meter::on_stderr();
    let mut tell = meter.as_ref().map(|m| m.callback());
    let sum = crate::demo::generate_for_bench(
        &args.out,
        &crate::demo::DemoOptions {
            incidents: args.incidents,
            seed: args.seed,
        },
        args.bench.as_deref(),
        &mut |p| {
            if let Some(t) = tell.as_mut() {
                t(p)
            }
        },
    );
    drop(tell);
    drop(meter);
    let sum = sum.map_err(work)?;
    writeln!(
        ctx.out,
        "wrote {}: {} incidents, {} examinations, {} custody entries, {} attachments, {} exposure rows ({:.1} s)",
        args.out.display(),
        sum.incidents,
        sum.examinations,
        sum.custody,
        sum.attachments,
        sum.exposure,
        started.elapsed().as_secs_f64()
    )?;
    Ok(())
}
