//! The csv import into an in-memory store: never panics; a refusal leaves the database
//! unchanged; an accepted file leaves a database that verifies.
#![no_main]

use libfuzzer_sys::fuzz_target;

#[path = "import_common.rs"]
mod import_common;

fuzz_target!(|data: &[u8]| {
    // the first byte picks dry run or not (and strict mode, in import_common)
    let dry_run = data.first().is_some_and(|b| b & 2 == 2);
    import_common::check("fuzz.csv", data.get(1..).unwrap_or(&[]), dry_run);
});
