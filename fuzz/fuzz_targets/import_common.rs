// Shared by the import targets: import into a fresh in-memory store; on refusal the database
// must be exactly as before (audit head and incident count), on success it must verify.

use shardlog::store::exchange::ImportOptions;
use shardlog::store::{Stamp, Store};

pub fn check(name: &str, data: &[u8], dry_run: bool) {
    let mut store = Store::open_in_memory().expect("an in-memory store opens");
    store.set_id_seed(7);
    let stamp = Stamp::new(
        "fuzz",
        chrono::DateTime::from_timestamp_millis(1_780_000_000_000).expect("a time"),
    );
    let head = store.audit_head().expect("audit head");
    let count = store.incident_count().expect("count");
    let options = ImportOptions {
        dry_run,
        strict: data.first().is_some_and(|b| b & 1 == 1),
        // no files come with a fuzzed file: attachment rows must be refused, never accepted
        attachments: None,
        ..ImportOptions::default()
    };
    let result = store.import_bytes(name, data, options, &stamp);
    if let Ok(Err(rejected)) = &result {
        assert!(!rejected.problems.is_empty(), "a refusal names its problems");
        for p in &rejected.problems {
            assert!(!p.place.is_empty() && !p.message.is_empty(), "{p:?}");
        }
    }
    match result {
        Ok(Ok(summary)) if !dry_run => {
            let report = store.verify().expect("verify runs");
            assert!(report.ok(), "after import of {summary:?}: {:?}", report.first_problem);
            assert_eq!(
                store.incident_count().expect("count"),
                count + summary.incidents as u64
            );
        }
        // a dry run, a refusal or an error: nothing written
        _ => {
            assert_eq!(store.audit_head().expect("audit head"), head, "refused import wrote");
            assert_eq!(store.incident_count().expect("count"), count);
        }
    }
}
