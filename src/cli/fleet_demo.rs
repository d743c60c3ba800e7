//! `shardlog fleet demo`: a fleet database filled with the invented demo story, spread over
//! several benches, for trying the fleet and for benchmarks. Each bench is the one
//! `shardlog demo --bench` makes. By default its incidents go straight into the fleet's
//! tables as they are made (`store::fleet::BulkFill`: the rows, chains and read tables a first
//! push gives); `--through-sync` writes each bench file and pushes it through `sync` instead
//! (slower; the bulk fill's test compares the two).

use std::path::PathBuf;

use super::records::work;
use super::{fleet_error, fleet_url, CliError, Context};
use crate::store::fleet::{BulkFill, Fleet, FleetError};
use crate::store::{Store, StoreError};

#[derive(Debug, clap::Args)]
pub struct FleetDemoArgs {
    /// The fleet database (else $SHARDLOG_FLEET_URL), as its owner: its schema is made or
    /// upgraded first.
    #[arg(long, value_name = "URL")]
    pub url: Option<String>,
    /// Incidents in all, shared out over the benches.
    #[arg(long, value_name = "N", default_value_t = 2000)]
    pub incidents: u64,
    /// How many benches (codes B01, B02, …).
    #[arg(long, value_name = "K", default_value_t = 3)]
    pub benches: u32,
    /// Seed of the first bench (the next ones take the following seeds).
    #[arg(long, value_name = "S", default_value_t = crate::demo::DEFAULT_SEED)]
    pub seed: u64,
    /// Keep the bench files in this folder (which must not exist) instead of removing them
    /// (with --through-sync: the bulk fill makes no whole bench file).
    #[arg(long, value_name = "DIR")]
    pub keep_benches: Option<PathBuf>,
    /// Make each bench file and push it through `sync`, as a real bench would, instead of
    /// writing the same rows straight into the fleet's tables.
    #[arg(long)]
    pub through_sync: bool,
}

pub fn run(args: FleetDemoArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    if args.benches == 0 || args.benches > 99 {
        return Err(CliError::usage("--benches: expected a number from 1 to 99"));
    }
    let per_bench_max = 5_000_000u64;
    if args.incidents < u64::from(args.benches)
        || args.incidents > per_bench_max * u64::from(args.benches)
    {
        return Err(CliError::usage(format!(
            "--incidents: expected at least one per bench and at most {per_bench_max} per bench"
        )));
    }
    if args.keep_benches.is_some() && !args.through_sync {
        return Err(CliError::usage(
            "--keep-benches: the bulk fill makes no whole bench file; add --through-sync",
        ));
    }
    let url = fleet_url(args.url.clone(), "--url")?;
    let started = std::time::Instant::now();
    let mut fleet = Fleet::connect(&url).map_err(fleet_error)?;
    fleet.init().map_err(fleet_error)?;
    drop(fleet);
    let (dir, keep) = match &args.keep_benches {
        Some(d) if d.exists() => {
            return Err(CliError::usage(format!(
                "--keep-benches: {} already exists; name a new folder",
                d.display()
            )))
        }
        Some(d) => (d.clone(), true),
        None => (
            std::env::temp_dir().join(format!("shardlog-fleet-demo.{}", std::process::id())),
            false,
        ),
    };
    std::fs::create_dir_all(&dir).map_err(|e| CliError::work(format!("{}: {e}", dir.display())))?;
    let result = if args.through_sync {
        fill(&args, &url, &dir, ctx)
    } else {
        fill_bulk(&args, &url, &dir, ctx)
    };
    if !keep {
        let _ = std::fs::remove_dir_all(&dir);
    }
    let total = result?;
    writeln!(
        ctx.out,
        "filled the fleet: {total} incidents over {} benches ({:.1} s)",
        args.benches,
        started.elapsed().as_secs_f64()
    )?;
    Ok(())
}

/// The code of the `b`th bench (from 0) and its share of the incidents.
fn bench_share(args: &FleetDemoArgs, b: u64) -> (String, u64) {
    let k = u64::from(args.benches);
    let code = format!("B{:02}", b + 1);
    (code, args.incidents / k + u64::from(b < args.incidents % k))
}

/// Make each bench's story and write it straight into the fleet, and say so; the number of
/// incidents written. Nothing is visible in the fleet before the end.
fn fill_bulk(
    args: &FleetDemoArgs,
    url: &str,
    dir: &std::path::Path,
    ctx: &mut Context<'_>,
) -> Result<u64, CliError> {
    let k = u64::from(args.benches);
    let codes: Vec<String> = (0..k).map(|b| bench_share(args, b).0).collect();
    let mut fill = BulkFill::begin(url, &codes, args.incidents).map_err(fleet_error)?;
    let mut total = 0;
    for b in 0..k {
        let (code, n) = bench_share(args, b);
        let started = std::time::Instant::now();
        // the bench's reference records and chain (no incidents), and its photos
        let path = dir.join(format!("{code}.db"));
        let options = crate::demo::DemoOptions {
            incidents: n,
            seed: args.seed.wrapping_add(b),
        };
        // a failure of the demo's own making, told as it is (the fill only hears that it
        // stopped)
        let mut source: Option<StoreError> = None;
        let streamed = fill.fill_bench(&code, |rows| {
            let mut failure: Option<FleetError> = None;
            let made = crate::demo::stream_for_bench(&path, &options, &code, |s| {
                rows.add(s).map_err(|e| {
                    let shown = e.to_string();
                    failure = Some(e);
                    StoreError::Database(shown)
                })
            });
            match (made, failure) {
                (Ok(_), _) => Ok(()),
                (Err(_), Some(e)) => Err(e),
                (Err(e), None) => {
                    let shown = FleetError::Bench(e.to_string());
                    source = Some(e);
                    Err(shown)
                }
            }
        });
        let streamed = match (streamed, source) {
            (Ok(s), _) => s,
            (Err(_), Some(e)) => return Err(work(e)),
            (Err(e), None) => return Err(fleet_error(e)),
        };
        let store = Store::open_existing(&path).map_err(work)?;
        let done = fill.end_bench(streamed, &store).map_err(fleet_error)?;
        writeln!(
            ctx.out,
            "bench {code}: {n} incidents, {} records written ({:.1} s)",
            done.records,
            started.elapsed().as_secs_f64()
        )?;
        total += n;
    }
    let started = std::time::Instant::now();
    fill.commit().map_err(fleet_error)?;
    writeln!(
        ctx.out,
        "read tables, indexes and statistics: {:.1} s",
        started.elapsed().as_secs_f64()
    )?;
    Ok(total)
}

/// Make each bench, push it, and say so; the number of incidents pushed.
fn fill(
    args: &FleetDemoArgs,
    url: &str,
    dir: &std::path::Path,
    ctx: &mut Context<'_>,
) -> Result<u64, CliError> {
    let k = u64::from(args.benches);
    let mut total = 0;
    for b in 0..k {
        let code = format!("B{:02}", b + 1);
        let n = args.incidents / k + u64::from(b < args.incidents % k);
        let path = dir.join(format!("{code}.db"));
        let options = crate::demo::DemoOptions {
            incidents: n,
            seed: args.seed.wrapping_add(b),
        };
        crate::demo::generate_for_bench(&path, &options, Some(&code), &mut |_| {}).map_err(work)?;
        let mut store = Store::open_existing(&path).map_err(work)?;
        let report = crate::store::fleet::sync(&mut store, url).map_err(fleet_error)?;
        writeln!(
            ctx.out,
            "bench {code}: {n} incidents, {} records pushed",
            report.push.records
        )?;
        total += n;
    }
    Ok(total)
}
