//! The fleet commands: `sync`, `fleet init|enrol|status|resolve`, `bench code`, `transfer`,
//! and the fleet parts of `init --bench`, `demo --bench` and `verify --fleet`.

use super::{fleet_error, fleet_url, CliError, Context};
use crate::store::fleet::{self, Fleet};
use crate::store::Store;

/// The fleet URL from the flag, else `$SHARDLOG_FLEET_URL`.
fn json(ctx: &mut Context<'_>, value: &impl serde::Serialize) -> Result<(), CliError> {
    let text =
        serde_json::to_string_pretty(value).map_err(|e| CliError::work(format!("JSON: {e}")))?;
    writeln!(ctx.out, "{text}")?;
    Ok(())
}

fn open_bench(ctx: &Context<'_>) -> Result<Store, CliError> {
    Store::open_existing(&ctx.db).map_err(|e| CliError::work(e.to_string()))
}

#[derive(Debug, clap::Args)]
pub struct SyncArgs {
    /// The fleet database (else $SHARDLOG_FLEET_URL).
    #[arg(long, value_name = "URL")]
    pub fleet: Option<String>,
    /// Print what moved as JSON.
    #[arg(long)]
    pub json: bool,
}

/// `sync`: push this bench's changes, then pull.
pub fn sync(args: SyncArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let url = fleet_url(args.fleet, "--fleet")?;
    let mut store = open_bench(ctx)?;
    let r = fleet::sync(&mut store, &url).map_err(fleet_error)?;
    if args.json {
        return json(ctx, &r);
    }
    let p = &r.push;
    match &p.receipt {
        Some(receipt) if p.status == "accepted" => writeln!(
            ctx.out,
            "pushed bench {} to {}: {} audit rows, {} records applied, {} conflicts, {} files; receipt {} ({})",
            r.bench,
            r.fleet,
            p.rows_sent,
            p.records,
            p.conflicts,
            p.files,
            receipt.fleet_seq,
            &receipt.fleet_hash[..16.min(receipt.fleet_hash.len())]
        )?,
        _ => writeln!(
            ctx.out,
            "bench {} is up to date in {} (nothing new to push)",
            r.bench, r.fleet
        )?,
    }
    print_received(ctx, &r.received)?;
    let q = &r.pulled;
    writeln!(
        ctx.out,
        "pulled {} reference records: {} lookup entries, {} sites, {} assets, {} suppliers, {} products, {} lots",
        q.total(),
        q.lookups,
        q.sites,
        q.assets,
        q.suppliers,
        q.products,
        q.lots
    )?;
    if q.exposure > 0 {
        writeln!(
            ctx.out,
            "pulled {} exposure rows of other benches (kept apart: `exposure list` shows them; this bench's rates use its own only)",
            q.exposure
        )?;
    }
    Ok(())
}

fn print_received(ctx: &mut Context<'_>, r: &fleet::IncidentPull) -> Result<(), CliError> {
    if r.incidents > 0 || r.files > 0 {
        writeln!(
            ctx.out,
            "received {} incidents sent to this bench ({} attachment files)",
            r.incidents, r.files
        )?;
    }
    for why in &r.kept_out {
        writeln!(ctx.out, "not received: {}", super::records::clean(why))?;
    }
    Ok(())
}

#[derive(Debug, clap::Args)]
pub struct TransferArgs {
    /// The incident (reference or key).
    #[arg(value_name = "REF")]
    pub reference: String,
    /// The code of the bench the specimen goes to.
    #[arg(long, value_name = "CODE")]
    pub to: String,
    /// A note for the custody entry.
    #[arg(long, default_value = "")]
    pub note: String,
}

/// `transfer REF --to CODE`: custody "sent" and the transfer record; the fleet moves the
/// incident's ownership when it witnesses the transfer.
pub fn transfer(args: TransferArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let to = fleet::check_bench_code(&args.to).map_err(CliError::usage)?;
    let mut store = open_bench(ctx)?;
    let t = store
        .transfer_incident(
            &args.reference,
            &to,
            &args.note,
            &super::records::edge_stamp(),
        )
        .map_err(|e| match e {
            crate::store::StoreError::Invalid { .. } => CliError::usage(e.to_string()),
            other => CliError::work(other.to_string()),
        })?;
    writeln!(
        ctx.out,
        "{}: specimen sent from bench {} to bench {} (custody \"sent\"); once both benches have synced, {} owns the incident and this bench's later edits of it become conflicts",
        t.reference, t.from, t.to, t.to
    )?;
    Ok(())
}

#[derive(Debug, clap::Args)]
pub struct FleetArgs {
    #[command(subcommand)]
    pub command: FleetCommand,
}

#[derive(Debug, clap::Subcommand)]
pub enum FleetCommand {
    /// Create or upgrade the fleet schema and its two roles (run as the database's owner).
    Init {
        /// The fleet database (else $SHARDLOG_FLEET_URL).
        #[arg(long, value_name = "URL")]
        url: Option<String>,
    },
    /// Give a bench its own login (run as the fleet's owner); again gives it a new password.
    Enrol {
        /// The bench's code.
        #[arg(value_name = "CODE")]
        code: String,
        /// The fleet database (else $SHARDLOG_FLEET_URL).
        #[arg(long, value_name = "URL")]
        url: Option<String>,
        /// Print as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Settle conflict N at the bench that owns its incident (`--db`): a new edit that names
    /// it, keeping the fleet's version (or with --take-other the version kept aside), then sync.
    Resolve {
        /// The conflict's number, as `fleet status` lists it.
        #[arg(value_name = "N")]
        conflict: i64,
        /// The fleet database (else $SHARDLOG_FLEET_URL).
        #[arg(long, value_name = "URL")]
        url: Option<String>,
        /// Take the version the fleet kept aside instead of the one it holds.
        #[arg(long)]
        take_other: bool,
        /// Print as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Per bench: code, witnessed head, last sync, incidents, open conflicts, refused pushes;
    /// then every open conflict with what differs between its two versions.
    Status {
        /// The fleet database (else $SHARDLOG_FLEET_URL).
        #[arg(long, value_name = "URL")]
        url: Option<String>,
        /// Print as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Fill a fleet database with the invented demo story over several benches (trying the
    /// fleet, benchmarks).
    Demo(super::fleet_demo::FleetDemoArgs),
}

pub fn fleet(args: FleetArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    match args.command {
        FleetCommand::Init { url } => {
            let url = fleet_url(url, "--url")?;
            let mut f = Fleet::connect(&url).map_err(fleet_error)?;
            let r = f.init().map_err(fleet_error)?;
            if r.version_before == r.version {
                writeln!(
                    ctx.out,
                    "{} is a shardlog fleet database (schema {}); nothing to upgrade",
                    f.shown(),
                    r.version
                )?;
            } else {
                writeln!(
                    ctx.out,
                    "{}: fleet schema {} → {}",
                    f.shown(),
                    r.version_before,
                    r.version
                )?;
            }
            writeln!(
                ctx.out,
                "roles: {} (benches push with it: add only, never update or delete history), {} (fleet users read with it); give each a password with ALTER ROLE … PASSWORD",
                r.bench_role, r.reader_role
            )?;
            Ok(())
        }
        FleetCommand::Enrol {
            code,
            url,
            json: as_json,
        } => {
            let code = fleet::check_bench_code(&code).map_err(CliError::usage)?;
            let url = fleet_url(url, "--url")?;
            let mut f = Fleet::connect(&url).map_err(fleet_error)?;
            let login = f.enrol(&code).map_err(fleet_error)?;
            if as_json {
                return json(ctx, &login);
            }
            writeln!(
                ctx.out,
                "bench {} pushes as login {} with password {} (shown once; enrol again for a new one). Only this login can push as {}.",
                login.bench, login.login, login.password, login.bench
            )?;
            Ok(())
        }
        FleetCommand::Resolve {
            conflict,
            url,
            take_other,
            json: as_json,
        } => {
            let url = fleet_url(url, "--url")?;
            let mut store = open_bench(ctx)?;
            let r = fleet::resolve(
                &mut store,
                &url,
                conflict,
                take_other,
                &super::records::edge_stamp(),
            )
            .map_err(fleet_error)?;
            if as_json {
                return json(ctx, &r);
            }
            let kept = if r.kept == "bench" {
                "the version the fleet kept aside"
            } else {
                "the fleet's version"
            };
            writeln!(
                ctx.out,
                "conflict {}: {} revision {} keeps {}; {}",
                r.conflict,
                r.reference,
                r.revision,
                kept,
                if r.closed {
                    "the fleet applied the edit and closed the conflict"
                } else {
                    "the fleet did not close it (see `fleet status`)"
                }
            )?;
            if !r.closed {
                return Err(CliError::work(format!(
                    "conflict {} is still open in the fleet",
                    r.conflict
                )));
            }
            Ok(())
        }
        FleetCommand::Demo(a) => super::fleet_demo::run(a, ctx),
        FleetCommand::Status { url, json: as_json } => {
            let url = fleet_url(url, "--url")?;
            let mut f = Fleet::connect(&url).map_err(fleet_error)?;
            let s = f.status().map_err(fleet_error)?;
            if as_json {
                return json(ctx, &s);
            }
            print_status(ctx, &s)
        }
    }
}

fn print_status(ctx: &mut Context<'_>, s: &fleet::FleetStatus) -> Result<(), CliError> {
    writeln!(
        ctx.out,
        "fleet {} (schema {}): {} incidents, {} receipts, head {}",
        s.database,
        s.schema_version,
        s.incidents,
        s.receipts,
        &s.head_hash[..16.min(s.head_hash.len())]
    )?;
    writeln!(
        ctx.out,
        "{:<9} {:>9} {:<17} {:<21} {:>9} {:>9} {:>7}",
        "bench", "head", "head hash", "last sync (UTC)", "incidents", "conflicts", "refused"
    )?;
    for b in &s.benches {
        writeln!(
            ctx.out,
            "{:<9} {:>9} {:<17} {:<21} {:>9} {:>9} {:>7}",
            b.code,
            b.head_seq,
            &b.head_hash[..16.min(b.head_hash.len())],
            b.last_sync.as_deref().unwrap_or("never"),
            b.incidents,
            b.open_conflicts,
            b.refused_pushes
        )?;
    }
    for b in s.benches.iter().filter(|b| b.last_refusal.is_some()) {
        writeln!(
            ctx.out,
            "{}: last refused push: {}",
            b.code,
            b.last_refusal.as_deref().unwrap_or_default()
        )?;
    }
    for c in &s.conflicts {
        print_conflict(ctx, c)?;
    }
    Ok(())
}

/// One open conflict: what it is on, whose row was kept aside, and both versions in brief.
fn print_conflict(ctx: &mut Context<'_>, c: &fleet::Conflict) -> Result<(), CliError> {
    let record = c.reference.clone().unwrap_or_else(|| c.record_id.clone());
    let why = match c.kind.as_str() {
        "transfer" => "sent to another bench by a bench that does not own it",
        _ if c.owner.as_deref() != Some(c.bench.as_str()) => {
            "edited by a bench that does not own it"
        }
        _ => "edited on a version the fleet had moved past",
    };
    writeln!(
        ctx.out,
        "conflict {} ({} {}): {} (row {} of bench {}; owner {}), opened {}",
        c.id,
        c.entity,
        super::records::clean(&record),
        why,
        c.bench_seq,
        c.bench,
        c.owner.as_deref().unwrap_or("none"),
        c.opened_at
    )?;
    for (name, image) in [
        ("fleet's version", &c.fleet_image),
        ("kept aside", &c.bench_image),
    ] {
        writeln!(
            ctx.out,
            "  {name}: {}",
            image
                .as_deref()
                .map(version_brief)
                .unwrap_or_else(|| "none (deleted)".into())
        )?;
    }
    if !c.differs_in.is_empty() {
        writeln!(ctx.out, "  they differ in: {}", c.differs_in.join(", "))?;
    }
    Ok(())
}

/// A version in one line: its revision, when it was saved, its status and its notes.
fn version_brief(image: &str) -> String {
    let v: serde_json::Value = serde_json::from_str(image).unwrap_or_default();
    let text = |k: &str| v.get(k).and_then(|x| x.as_str()).unwrap_or("").to_string();
    let mut notes = super::records::clean(&text("notes"));
    if notes.chars().count() > 60 {
        notes = notes.chars().take(59).collect::<String>() + "…";
    }
    match v.get("revision").and_then(|r| r.as_i64()) {
        Some(rev) => format!(
            "revision {rev}, saved {}, status {}, notes \"{notes}\"",
            text("updated_at"),
            text("status")
        ),
        None => format!("{} bytes of canonical JSON", image.len()),
    }
}

#[derive(Debug, clap::Args)]
pub struct BenchArgs {
    #[command(subcommand)]
    pub command: BenchCommand,
}

#[derive(Debug, clap::Subcommand)]
pub enum BenchCommand {
    /// Show this bench's code, or set it (before its first sync).
    Code {
        /// 2 to 8 letters or digits, starting with a letter.
        #[arg(value_name = "CODE")]
        code: Option<String>,
    },
}

pub fn bench(args: BenchArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    match args.command {
        BenchCommand::Code { code: None } => {
            let store = open_bench(ctx)?;
            match store
                .bench_code()
                .map_err(|e| CliError::work(e.to_string()))?
            {
                Some(c) => writeln!(ctx.out, "{c}")?,
                None => {
                    return Err(CliError::work(
                        "this bench has no code yet; set one with `shardlog bench code CODE`",
                    ))
                }
            }
            Ok(())
        }
        BenchCommand::Code { code: Some(code) } => {
            let code = fleet::check_bench_code(&code).map_err(CliError::usage)?;
            let mut store = open_bench(ctx)?;
            store
                .set_bench_code(&code)
                .map_err(|e| CliError::work(e.to_string()))?;
            writeln!(
                ctx.out,
                "bench code {code}: new references read BR-{code}-YYMMDD-NNNN; references made before keep theirs"
            )?;
            Ok(())
        }
    }
}

/// `verify --fleet URL`: this bench's chain against what the fleet witnessed.
pub fn verify_fleet(url: String, as_json: bool, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let store = open_bench(ctx)?;
    let v = fleet::verify_fleet(&store, &url).map_err(fleet_error)?;
    if as_json {
        json(ctx, &v)?;
    }
    match v.problems.first() {
        None => {
            if !as_json {
                writeln!(
                    ctx.out,
                    "ok: the fleet witnessed {} audit rows of bench {}, all unchanged here; {} receipts found in the fleet's chain of {} links, which recomputes",
                    v.witnessed_rows, v.bench, v.receipts, v.fleet_links
                )?;
            }
            Ok(())
        }
        Some(p) => Err(CliError::work(format!(
            "verify --fleet failed: {} problem{}; the first: {p}",
            v.problems.len(),
            if v.problems.len() == 1 { "" } else { "s" }
        ))),
    }
}
