//! The invented demo fleet: Tarnmoor Valley Lines, a regional rail operator with four
//! depots and a few hundred cars, glazed by four invented suppliers. Every name here is
//! invented. Deterministic from a seed.
//!
//! The story the data tells: impacts (ballast strikes) and vandalism lead, at high
//! stress; thermal edge breaks in annealed (and a few heat-strengthened) panes peak in
//! March and November, at low stress, and never occur in fully tempered panes; one fully tempered side-window lot of Brellin Safety
//! Glass (BS-2207) shows interior origins at nickel sulfide stones, at low applied stress
//! (spontaneous breakage). Mirror readings are drawn from a target stress with
//! R = (A/σ)² plus scatter, and the stored result is computed by the fracture core.
//!
//! Each record is entered after the last event it describes (the examination, or the
//! disposal of the specimen when the case is closed), so its audit stamp never precedes a
//! custody entry, examination or photograph in it; the log is a snapshot taken on
//! 2026-11-30, so recent breakages are still open.
//!
//! The world ([`world`]) and the story ([`story`]) are planned here; the records are
//! written through the store's bulk interface ([`crate::store::bulk`]).

use std::path::{Path, PathBuf};

use crate::store::bulk::{AuditRows, BulkFile, StreamedIncident};
use crate::store::progress::Progress;
use crate::store::{Stamp, StoreError};

mod incident;
mod png;
mod rng;
mod story;
mod world;

use incident::Maker;
use rng::Rng;
use world::{at_time, build_world, ymd};

pub const DEFAULT_INCIDENTS: u64 = 400;
pub const DEFAULT_SEED: u64 = 20_260_314;
/// Up to this many incidents the demo writes one audit row per incident; above it (benchmark
/// databases) one batch row per 1,000.
pub const PER_RECORD_AUDIT_UP_TO: u64 = 10_000;

#[derive(Debug, Clone)]
pub struct DemoOptions {
    pub incidents: u64,
    pub seed: u64,
}

#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct DemoSummary {
    pub incidents: u64,
    pub examinations: u64,
    pub custody: u64,
    pub attachments: u64,
    pub exposure: u64,
}
/// Generate the demo database at `out` (which must not exist).
pub fn generate(out: &Path, o: &DemoOptions) -> Result<DemoSummary, StoreError> {
    generate_told(out, o, &mut |_| {})
}

/// [`generate`], telling `progress` how many incidents have been made.
pub fn generate_told(
    out: &Path,
    o: &DemoOptions,
    progress: &mut (dyn FnMut(Progress) + Send),
) -> Result<DemoSummary, StoreError> {
    generate_for_bench(out, o, None, progress)
}

/// [`generate_told`] for a bench with a code: its references carry the code, and the code is
/// mixed into the seed, so that benches made from one seed still have keys of their own (and
/// the same seed and code make the same file).
pub fn generate_for_bench(
    out: &Path,
    o: &DemoOptions,
    bench: Option<&str>,
    progress: &mut (dyn FnMut(Progress) + Send),
) -> Result<DemoSummary, StoreError> {
    let (o, bench) = for_bench(o, bench)?;
    let o = &o;
    if out.exists() {
        return Err(StoreError::File {
            path: out.display().to_string(),
            message: "already exists; the demo writes a new file".into(),
        });
    }
    // a hidden name of this process beside the target: a killed run's copy is found and
    // removed by the next one (`store::remove_stale_partials`)
    let tmp: PathBuf = crate::store::temporary_sibling(out);
    let result = generate_into(&tmp, out, o, bench.as_deref(), progress);
    match result {
        Ok(sum) => {
            std::fs::rename(&tmp, out).map_err(|e| StoreError::File {
                path: out.display().to_string(),
                message: e.to_string(),
            })?;
            Ok(sum)
        }
        Err(e) => {
            let _ = std::fs::remove_file(&tmp);
            Err(e)
        }
    }
}

/// The options and checked code of a bench's demo: the code is mixed into the seed.
fn for_bench(
    o: &DemoOptions,
    bench: Option<&str>,
) -> Result<(DemoOptions, Option<String>), StoreError> {
    let bench = match bench {
        Some(b) => Some(
            crate::store::check_bench_code(b).map_err(|m| StoreError::invalid("bench code", m))?,
        ),
        None => None,
    };
    let o = DemoOptions {
        incidents: o.incidents,
        seed: match &bench {
            // FNV-1a over the code's bytes (a fixed mix, not a secret)
            Some(code) => code.bytes().fold(o.seed ^ 0xcbf2_9ce4_8422_2325, |h, b| {
                (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3)
            }),
            None => o.seed,
        },
    };
    Ok((o, bench))
}

/// The demo of bench `bench` made as [`generate_for_bench`] makes it, except that the
/// incidents are not written to the file at `out` (which must not exist) but handed to
/// `sink` in the order of the audit chain, each with its image and the audit row covering
/// it. The file keeps the reference records, the whole audit chain and the attachment files
/// (beside it): with the streamed incidents, everything a first push of that bench would
/// send. For filling the fleet in bulk (`fleet demo`).
pub fn stream_for_bench(
    out: &Path,
    o: &DemoOptions,
    bench: &str,
    sink: impl FnMut(StreamedIncident) -> Result<(), StoreError>,
) -> Result<DemoSummary, StoreError> {
    let (o, bench) = for_bench(o, Some(bench))?;
    if out.exists() {
        return Err(StoreError::File {
            path: out.display().to_string(),
            message: "already exists; the demo writes a new file".into(),
        });
    }
    let mut file = BulkFile::create(out, out, o.seed ^ 0x5EED_0000_0000_0001)?;
    let mut rng = Rng(o.seed);
    let world = build_world(&mut rng, o.incidents);
    let setup_stamp = Stamp::new("tomas", at_time(ymd(2023, 12, 15), 9 * 60));
    let mut summary = DemoSummary::default();
    let mut load = file.begin()?;
    let keys = world.write(&mut load, &setup_stamp, &mut summary)?;
    let plans = story::plan_incidents(&mut rng, &world, o.incidents);
    let audit = audit_rows(&o);
    let attachments = load.attachments();
    let mut maker = Maker::new(&world, &keys, &mut rng, &mut summary, attachments);
    maker.bench = bench.clone();
    let mut next = plans.iter();
    let written = load.stream_incidents(
        audit,
        |ids| next.next().map(|plan| maker.make(plan, ids)),
        sink,
    )?;
    summary.incidents += written;
    file.finish()?;
    if let Some(code) = bench {
        crate::store::Store::open_existing(out)?.set_bench_code(&code)?;
    }
    Ok(summary)
}

/// How a demo of this size audits its incidents.
fn audit_rows(o: &DemoOptions) -> AuditRows {
    // a demo log of a real size carries one audit row per incident, stamped by the analyst
    // who entered it when it was entered, as the interface writes them; only at benchmark
    // scale are the rows batched (one per 1,000 incidents, each listing their digests)
    if o.incidents <= PER_RECORD_AUDIT_UP_TO {
        AuditRows::OnePerIncident
    } else {
        AuditRows::Batched {
            seed: o.seed ^ 0xB0B,
        }
    }
}

fn generate_into(
    tmp: &Path,
    out: &Path,
    o: &DemoOptions,
    bench: Option<&str>,
    progress: &mut (dyn FnMut(Progress) + Send),
) -> Result<DemoSummary, StoreError> {
    let mut file = BulkFile::create(tmp, out, o.seed ^ 0x5EED_0000_0000_0001)?;
    let mut rng = Rng(o.seed);
    let world = build_world(&mut rng, o.incidents);
    let setup_stamp = Stamp::new("tomas", at_time(ymd(2023, 12, 15), 9 * 60));
    let mut summary = DemoSummary::default();
    let mut load = file.begin()?;
    let keys = world.write(&mut load, &setup_stamp, &mut summary)?;
    let plans = story::plan_incidents(&mut rng, &world, o.incidents);
    let audit = audit_rows(o);
    let attachments = load.attachments();
    let mut maker = Maker::new(&world, &keys, &mut rng, &mut summary, attachments);
    maker.bench = bench.map(String::from);
    let mut next = plans.iter();
    let total = Some(plans.len() as u64);
    let mut made = 0u64;
    // the incidents are made on the load's second thread, in the order they were entered
    let written = load.write_incidents(audit, |ids| {
        progress(Progress {
            stage: "generating",
            done: made,
            total,
        });
        made += 1;
        next.next().map(|plan| maker.make(plan, ids))
    })?;
    summary.incidents += written;
    file.finish()?;
    if let Some(code) = bench {
        crate::store::Store::open_existing(tmp)?.set_bench_code(code)?;
    }
    Ok(summary)
}

/// A demo database of `incidents` made from `seed` in a new temporary folder (tests); the
/// folder lives as long as the returned guard.
#[cfg(test)]
pub(crate) fn temp_demo(incidents: u64, seed: u64) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let path = dir.path().join("d.db");
    generate(&path, &DemoOptions { incidents, seed }).expect("the demo is written");
    (dir, path)
}
