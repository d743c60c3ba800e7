//! The audit chain rewritten with plain SQL, as someone holding the file could.

use std::path::Path;

/// An audit row as text: seq, at, actor, entity, entity id, op, before, after.
type AuditRowText = (
    i64,
    String,
    String,
    String,
    String,
    String,
    Option<String>,
    Option<String>,
);

/// Recompute every audit hash from entry `from` on, and store the new head: what a
/// careful forger does after changing a row.
pub fn rechain(db: &Path, from: i64) {
    let c = rusqlite::Connection::open(db).unwrap();
    let mut prev: String = c
        .query_row("SELECT prev_hash FROM audit WHERE seq = ?1", [from], |r| {
            r.get(0)
        })
        .unwrap();
    let rows: Vec<AuditRowText> = {
        let mut st = c
            .prepare("SELECT seq, at, actor, entity, entity_id, op, before, after FROM audit WHERE seq >= ?1 ORDER BY seq")
            .unwrap();
        st.query_map([from], |r| {
            Ok((
                r.get(0)?,
                r.get(1)?,
                r.get(2)?,
                r.get(3)?,
                r.get(4)?,
                r.get(5)?,
                r.get(6)?,
                r.get(7)?,
            ))
        })
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap()
    };
    for (seq, at, actor, entity, entity_id, op, before, after) in rows {
        let row = shardlog::store::canon::AuditRow {
            seq,
            at: &at,
            actor: &actor,
            entity: &entity,
            entity_id: &entity_id,
            op: &op,
            before: before.as_deref(),
            after: after.as_deref(),
        };
        let hash = row.hash(&prev);
        c.execute(
            "UPDATE audit SET prev_hash = ?1, hash = ?2 WHERE seq = ?3",
            rusqlite::params![prev, hash, seq],
        )
        .unwrap();
        prev = hash;
    }
    c.execute(
        "UPDATE meta SET value = ?1 WHERE key = 'audit_head_hash'",
        [&prev],
    )
    .unwrap();
}
