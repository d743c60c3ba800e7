//! `sync`: push this bench's new history, keep the receipt, then pull reference data; and
//! `verify --fleet`: this bench's chain against what the fleet witnessed, the bench's receipts
//! against the fleet's chain, and the fleet's chain recomputed.

use sha2::{Digest, Sha256};

use super::pull::{self, PullReport};
use super::pull_incidents::{self, IncidentPull};
use super::push::{self, witnessed_head, PushOutcome};
use super::{Fleet, FleetError};
use crate::store::canon::{self, GENESIS};
use crate::store::outbox::Receipt;
use crate::store::Store;

/// What one sync moved.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SyncReport {
    pub bench: String,
    pub fleet: String,
    pub push: PushOutcome,
    pub pulled: PullReport,
    /// Incidents other benches sent here.
    pub received: IncidentPull,
}

/// The bench's code, or the message that says how to set one.
pub(crate) fn code_of(store: &Store) -> Result<String, FleetError> {
    store.bench_code()?.ok_or_else(|| {
        FleetError::Bench(
            "this bench has no code, so the fleet cannot know it; set one with `shardlog bench code CODE` (2 to 8 letters or digits) and sync again".into(),
        )
    })
}

/// Push, keep the receipt, pull.
pub fn sync(store: &mut Store, url: &str) -> Result<SyncReport, FleetError> {
    let bench = code_of(store)?;
    let mut fleet = Fleet::connect(url)?;
    fleet.check_schema()?;
    let outcome = push::push(store, &mut fleet, &bench, |r| Ok(store.save_receipt(r)?))?;
    // the fleet witnessed more of this bench than the bench now holds: an old copy
    let (head_seq, head_hash) = witnessed_head(&mut fleet, &bench)?;
    let (local_seq, _) = store.audit_head_entry()?;
    if local_seq < head_seq {
        return Err(FleetError::Refused {
            kind: "fork".into(),
            detail: format!(
                "the fleet witnessed row {head_seq} ({}) of bench {bench}, but this bench's history ends at row {local_seq}: it was restored from an old copy; restore the newest copy",
                &head_hash[..12.min(head_hash.len())]
            ),
        });
    }
    let (pulled, head) = pull::pull(store, &mut fleet, &bench, local_seq)?;
    let received = pull_incidents::pull_incidents(store, &mut fleet, &bench, head)?;
    Ok(SyncReport {
        bench,
        fleet: fleet.shown().to_string(),
        push: outcome,
        pulled,
        received,
    })
}

/// What `verify --fleet` found.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FleetVerify {
    pub bench: String,
    /// Rows of this bench the fleet witnessed, and how many of them this bench holds unchanged.
    pub witnessed_rows: u64,
    pub matching_rows: u64,
    /// This bench's receipts found in the fleet's chain.
    pub receipts: u64,
    /// Links of the fleet's own chain recomputed.
    pub fleet_links: u64,
    pub problems: Vec<String>,
}

/// The canonical text of a receipt (as `fleet_receipt_text` in schema/fleet/0001_fleet.sql).
#[allow(clippy::too_many_arguments)]
pub(crate) fn receipt_text(
    fleet_seq: i64,
    at: &str,
    bench: &str,
    from_seq: i64,
    to_seq: i64,
    bench_hash: &str,
    records: i64,
) -> String {
    let mut out = String::from("{\"at\":");
    canon::write_str(at, &mut out);
    out.push_str(",\"bench\":");
    canon::write_str(bench, &mut out);
    out.push_str(",\"bench_hash\":");
    canon::write_str(bench_hash, &mut out);
    out.push_str(&format!(
        ",\"fleet_seq\":{fleet_seq},\"from_seq\":{from_seq},\"records\":{records},\"to_seq\":{to_seq}}}"
    ));
    out
}

pub(crate) fn link_hash(prev_hex: &str, body: &str) -> String {
    let mut h = Sha256::new();
    let prev: Vec<u8> = (0..prev_hex.len() / 2)
        .filter_map(|i| u8::from_str_radix(prev_hex.get(2 * i..2 * i + 2)?, 16).ok())
        .collect();
    h.update(&prev);
    h.update(body.as_bytes());
    canon::hex(&h.finalize())
}

/// Check this bench against the fleet.
pub fn verify_fleet(store: &Store, url: &str) -> Result<FleetVerify, FleetError> {
    let bench = code_of(store)?;
    let mut fleet = Fleet::connect(url)?;
    fleet.check_schema()?;
    let mut v = FleetVerify {
        bench: bench.clone(),
        witnessed_rows: 0,
        matching_rows: 0,
        receipts: 0,
        fleet_links: 0,
        problems: Vec::new(),
    };
    // 1. every row the fleet witnessed is still in this bench's chain, unchanged
    let witnessed = fleet.client.query(
        "SELECT seq, hash FROM bench_chain WHERE bench = $1 ORDER BY seq",
        &[&bench],
    )?;
    for row in &witnessed {
        let (seq, hash): (i64, String) = (row.get(0), row.get(1));
        v.witnessed_rows += 1;
        match store.audit_hash_at(seq)? {
            Some(h) if h == hash => v.matching_rows += 1,
            Some(h) => v.problems.push(format!(
                "audit row {seq}: the fleet witnessed {}, this bench now has {}: rewritten after it was synced",
                &hash[..12], &h[..12.min(h.len())]
            )),
            None => v.problems.push(format!(
                "audit row {seq}: witnessed by the fleet, missing here: rows were cut off or the bench was restored from an old copy"
            )),
        }
    }
    // 2. the fleet's chain recomputed, and this bench's receipts in it
    let links = fleet.client.query(
        "SELECT fleet_seq, at, bench, from_seq, to_seq, bench_hash, records, prev_hash, hash
         FROM fleet_receipts ORDER BY fleet_seq",
        &[],
    )?;
    let mut prev = GENESIS.to_string();
    let mut by_seq = std::collections::HashMap::new();
    for (k, r) in links.iter().enumerate() {
        let seq: i64 = r.get(0);
        let body = receipt_text(
            seq,
            r.get(1),
            r.get(2),
            r.get(3),
            r.get(4),
            r.get(5),
            r.get(6),
        );
        let stored_prev: String = r.get(7);
        let hash: String = r.get(8);
        if seq != k as i64 + 1 || stored_prev != prev || link_hash(&prev, &body) != hash {
            v.problems.push(format!(
                "fleet chain link {seq}: does not follow from the link before; the fleet's receipts were altered"
            ));
        }
        v.fleet_links += 1;
        by_seq.insert(seq, hash.clone());
        prev = hash;
    }
    for Receipt {
        fleet_seq,
        fleet_hash,
        ..
    } in store.fleet_receipts()?
    {
        match by_seq.get(&fleet_seq) {
            Some(h) if *h == fleet_hash => v.receipts += 1,
            _ => v.problems.push(format!(
                "receipt {fleet_seq} ({}) kept here is not in the fleet's chain",
                &fleet_hash[..12.min(fleet_hash.len())]
            )),
        }
    }
    Ok(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn receipt_text_is_canonical() {
        let t = receipt_text(3, "2026-12-03T06:30:00.000Z", "NORTH", 1, 20, "ab", 7);
        let v: serde_json::Value = serde_json::from_str(&t).unwrap();
        assert_eq!(canon::canonical_value(&v), t);
        // SHA-256 of "abc" with no previous bytes (FIPS 180-4 example, common knowledge)
        assert_eq!(
            link_hash("", "abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }
}
