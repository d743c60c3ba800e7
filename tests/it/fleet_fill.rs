//! `fleet demo`'s bulk fill against the sync path, on a real PostgreSQL server: the same
//! seeds and sizes give the same fleet, table by table (records, witnessed chains, receipts
//! but their times, files, and the read tables with the counts by month, and the tables'
//! constraints, indexes and triggers), and `verify` passes on the filled fleet.

use crate::fleet_sync::{err, out, run, TestFleet};
use crate::support::fleet::Cluster;

/// One digest per table of what the fleet holds, leaving out only what is the time of the
/// fill (receipt times and the hashes that cover them, the benches' sync times).
fn tables(f: &TestFleet<'_>) -> Vec<(String, i64, String)> {
    const TABLES: &[(&str, &str)] = &[
        (
            "fleet_records",
            "SELECT entity, id, origin, owner, image, digest, reference, bench_seq, fleet_seq
             FROM fleet_records ORDER BY entity, id, origin",
        ),
        (
            "bench_chain",
            "SELECT bench, seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash,
                    fleet_seq FROM bench_chain ORDER BY bench, seq",
        ),
        (
            "fleet_receipts",
            "SELECT fleet_seq, bench, from_seq, to_seq, bench_hash, records FROM fleet_receipts
             ORDER BY fleet_seq",
        ),
        (
            "fleet_benches",
            "SELECT code, head_seq, head_hash FROM fleet_benches ORDER BY code",
        ),
        (
            "fleet_files",
            "SELECT sha256, md5(bytes) FROM fleet_files ORDER BY sha256",
        ),
        (
            "fleet_facts",
            "SELECT * FROM fleet_facts ORDER BY id",
        ),
        (
            "fleet_search",
            "SELECT id, doc FROM fleet_search ORDER BY id",
        ),
        (
            "fleet_incident_order",
            "SELECT * FROM fleet_incident_order ORDER BY ord",
        ),
        (
            "fleet_fact_months",
            "SELECT * FROM fleet_fact_months WHERE n <> 0 ORDER BY 1, 2, 3, 4, 5, 6, 7, 8, 9",
        ),
        (
            "fleet_conflicts and fleet_refusals",
            "SELECT 'conflict', id FROM fleet_conflicts UNION ALL SELECT 'refusal', id FROM fleet_refusals",
        ),
        (
            // what the fill drops and makes again (indexes, the records' foreign keys) and
            // the triggers it turns off for the load: all back, checked and on
            "constraints, indexes and triggers",
            "SELECT 'constraint', conrelid::regclass::text, conname::text,
                    pg_get_constraintdef(oid), convalidated::text
             FROM pg_constraint WHERE connamespace = 'public'::regnamespace
             UNION ALL
             SELECT 'index', i.indrelid::regclass::text, c.relname::text,
                    pg_get_indexdef(i.indexrelid), i.indisvalid::text
             FROM pg_index i JOIN pg_class c ON c.oid = i.indexrelid
             WHERE c.relnamespace = 'public'::regnamespace
             UNION ALL
             SELECT 'trigger', tgrelid::regclass::text, tgname::text, tgenabled::text, ''
             FROM pg_trigger WHERE NOT tgisinternal
             ORDER BY 1, 2, 3",
        ),
    ];
    let mut c = f.admin();
    TABLES
        .iter()
        .map(|(name, sql)| {
            let digest_sql = format!(
                "SELECT count(*), coalesce(md5(string_agg(t::text, E'\\n')), '-') FROM ({sql}) t"
            );
            let row = c.query_one(digest_sql.as_str(), &[]).expect(name);
            (name.to_string(), row.get(0), row.get(1))
        })
        .collect()
}

/// `fleet demo` of `incidents` over `benches`, by the bulk fill or through sync.
fn fill(f: &TestFleet<'_>, incidents: u64, benches: u32, through_sync: bool) -> String {
    let url = f.owner_url();
    let (n, k) = (incidents.to_string(), benches.to_string());
    let mut args = vec![
        "fleet",
        "demo",
        "--url",
        &url,
        "--incidents",
        &n,
        "--benches",
        &k,
        "--seed",
        "41",
    ];
    if through_sync {
        args.push("--through-sync");
    }
    let o = run(&args);
    assert!(o.status.success(), "{args:?}: {}", err(&o));
    out(&o)
}

fn same_fleet(incidents: u64, benches: u32, least_incidents: i64) {
    let cluster = Cluster::shared();
    let synced = TestFleet::new(cluster);
    let filled = TestFleet::new(cluster);
    fill(&synced, incidents, benches, true);
    let said = fill(&filled, incidents, benches, false);
    assert!(
        said.contains(&format!(
            "filled the fleet: {incidents} incidents over {benches} benches"
        )),
        "{said}"
    );
    let (a, b) = (tables(&synced), tables(&filled));
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x, y, "through sync, then bulk");
    }
    let facts = &b[5];
    assert!(facts.1 >= least_incidents, "{facts:?}");
    assert!(b[0].1 > facts.1, "records beyond the incidents: {:?}", b[0]);
    assert_eq!(b[2].1, i64::from(benches), "one receipt per bench");
    // verify on the filled fleet: every witnessed chain, the receipts' chain (times and all),
    // each record against its digest, the read tables against the images
    let url = filled.owner_url();
    let o = run(&["--db", &url, "verify", "--json"]);
    assert!(
        o.status.success(),
        "verify on the filled fleet: {}{}",
        out(&o),
        err(&o)
    );
    let v: serde_json::Value = serde_json::from_str(&out(&o)).expect("verify --json");
    assert_eq!(v["problems"], serde_json::json!([]), "{v}");
    // the fill only makes new benches
    let o = run(&[
        "fleet",
        "demo",
        "--url",
        &url,
        "--incidents",
        "10",
        "--benches",
        "1",
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
    assert!(err(&o).contains("already holds bench B01"), "{}", err(&o));
    assert_eq!(tables(&filled), b, "a refused fill left something behind");
}

/// Three benches of 700 each: one audit row per incident, as a demo of a real size writes.
#[test]
fn the_bulk_fill_gives_the_fleet_sync_gives_with_an_audit_row_per_incident() {
    same_fleet(2_100, 3, 2_100);
}

/// Two benches of 10,001 each: benchmark-sized, the incidents audited a thousand per batch
/// row, each listing their digests.
#[test]
fn the_bulk_fill_gives_the_fleet_sync_gives_with_batched_audit_rows() {
    same_fleet(20_002, 2, 20_002);
}
