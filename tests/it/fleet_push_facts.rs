//! A large push sends each incident's read-table row beside its image
//! (schema/fleet/0010_push_facts.sql). The rows a real bench sends are the rows the fleet's
//! own view gives, table for table; a push whose sent rows differ from its images is refused
//! inside the server with nothing of it applied, and the bench then syncs as usual.

use crate::fleet_sync::{demo_bench, err, out, run, sync_ok, TestFleet};
use crate::support::fleet::Cluster;

/// The read tables and the counts by month, as digests.
fn read_tables(f: &TestFleet<'_>) -> Vec<(i64, String)> {
    const TABLES: [&str; 3] = [
        "SELECT * FROM fleet_facts ORDER BY id",
        "SELECT id, doc FROM fleet_search ORDER BY id",
        "SELECT * FROM fleet_fact_months WHERE n <> 0 ORDER BY 1, 2, 3, 4, 5, 6, 7, 8, 9",
    ];
    let mut c = f.admin();
    TABLES
        .iter()
        .map(|sql| {
            let digest = format!(
                "SELECT count(*), coalesce(md5(string_agg(t::text, E'\\n')), '-') FROM ({sql}) t"
            );
            let row = c.query_one(digest.as_str(), &[]).expect(sql);
            (row.get(0), row.get(1))
        })
        .collect()
}

/// The secondary indexes of the read tables, by name.
fn read_indexes(f: &TestFleet<'_>) -> Vec<String> {
    f.admin()
        .query(
            "SELECT indexname FROM pg_indexes WHERE tablename IN ('fleet_facts', 'fleet_search')
             ORDER BY indexname",
            &[],
        )
        .expect("indexes")
        .iter()
        .map(|r| r.get(0))
        .collect()
}

#[test]
fn the_rows_a_large_push_sends_are_the_rows_the_fleet_works_out_itself() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    // over the size from which a push sends its rows
    let db = demo_bench(dir.path(), "NORTH", 10_050);
    let indexes = read_indexes(&fleet);
    assert!(indexes.len() >= 12, "{indexes:?}");
    let r = sync_ok(&db, &fleet.bench_url("NORTH"));
    assert_eq!(r["push"]["status"], "accepted");
    let sent = read_tables(&fleet);
    assert_eq!(sent[0].0, 10_050, "one facts row per incident");
    assert_eq!(
        read_indexes(&fleet),
        indexes,
        "the read tables keep their indexes"
    );
    // the fleet's own reading of every image (no rows staged: the view for all)
    let mut c = fleet.admin();
    c.batch_execute(
        "BEGIN;
         SELECT fleet_refresh_facts(array_agg(id)) FROM fleet_records WHERE entity = 'incident';
         COMMIT;",
    )
    .unwrap();
    assert_eq!(read_tables(&fleet), sent, "sent rows against the view's");
    let o = run(&["--db", &fleet.owner_url(), "verify", "--json"]);
    assert!(o.status.success(), "verify: {}{}", out(&o), err(&o));
}

#[test]
fn a_push_whose_sent_rows_differ_from_its_images_is_refused_with_nothing_applied() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 30);
    let before = fleet.state();
    let facts_before = read_tables(&fleet);

    // the bench's whole chain and its incidents' images, staged by hand through the bench
    // role, each incident with a read-table row whose found date is not its image's
    let bench = rusqlite::Connection::open(&db).unwrap();
    let mut rows = bench
        .prepare(
            "SELECT seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash
             FROM audit ORDER BY seq",
        )
        .unwrap();
    type Row = (
        i64,
        String,
        String,
        String,
        String,
        String,
        Option<String>,
        Option<String>,
        String,
        String,
    );
    let chain: Vec<Row> = rows
        .query_map([], |r| {
            Ok((
                r.get(0)?,
                r.get(1)?,
                r.get(2)?,
                r.get(3)?,
                r.get(4)?,
                r.get(5)?,
                r.get(6)?,
                r.get(7)?,
                r.get(8)?,
                r.get(9)?,
            ))
        })
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    let store = shardlog::store::Store::open_existing(&db).unwrap();
    let ids: Vec<String> = bench
        .prepare("SELECT id FROM incidents ORDER BY id")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    assert_eq!(ids.len(), 30);
    let mut c = postgres::Client::connect(&fleet.bench_url("NORTH"), postgres::NoTls).unwrap();
    let mut tx = c.transaction().unwrap();
    for (seq, at, actor, entity, entity_id, op, before, after, prev, hash) in &chain {
        tx.execute(
            "INSERT INTO push_entries (seq, at, actor, entity, entity_id, op, before, after,
                                       prev_hash, hash)
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10)",
            &[
                seq, at, actor, entity, entity_id, op, before, after, prev, hash,
            ],
        )
        .unwrap();
    }
    for id in &ids {
        let inc = store.get(id).unwrap();
        let image = shardlog::store::canon::incident_image(&inc).unwrap();
        let digest = shardlog::store::canon::sha256_hex(image.as_bytes());
        tx.execute(
            "INSERT INTO push_records (entity, id, image, digest, reference, found_on, position,
                                       status, words)
             VALUES ('incident', $1, $2, $3, $4, '1900-01-01', '', 'open', 'nothing')",
            &[id, &image, &digest, &inc.reference],
        )
        .unwrap();
    }
    let refused = tx
        .query_one("SELECT status FROM fleet_push('NORTH')", &[])
        .unwrap_err();
    let said = refused
        .as_db_error()
        .map(|e| e.message().to_string())
        .unwrap_or_default();
    assert!(
        said.contains("the read-table row the push sent is not what its image gives"),
        "{refused}"
    );
    drop(tx);
    assert_eq!(fleet.state(), before, "nothing of the push applied");
    assert_eq!(read_tables(&fleet), facts_before);

    // the bench's own sync (a small push: the fleet reads the images itself) is accepted
    let r = sync_ok(&db, &fleet.bench_url("NORTH"));
    assert_eq!(r["push"]["status"], "accepted");
    assert_eq!(read_tables(&fleet)[0].0, 30);
    let o = run(&["--db", &fleet.owner_url(), "verify", "--json"]);
    assert!(o.status.success(), "verify: {}{}", out(&o), err(&o));
}
