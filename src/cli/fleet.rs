//! The fleet commands: `sync`, `fleet init`, `fleet status`, `bench code`, and the fleet
//! parts of `init --bench`, `demo --bench` and `verify --fleet`.

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
    /// Per bench: code, witnessed head, last sync, incidents, open conflicts, refused pushes.
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
    Ok(())
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
