//! Upkeep of the lookup lists a lab may change: add an entry, rename one (its label; the code
//! the records hold never changes), retire one (hidden from the pick-lists of new work, kept
//! for the records that hold it) and bring a retired one back. Each is one transaction with
//! its audit row, like every change.

use rusqlite::{params, Connection, OptionalExtension};

use super::audit::Chain;
use super::canon;
use super::model::*;
use super::refdata::{self, check_code, LOOKUP};
use super::{Store, StoreError};

/// The code a new incident's status takes: retiring it would leave new work with a status
/// no pick-list offers.
const DEFAULT_STATUS: &str = "reported";

impl LookupKind {
    /// The lists a lab keeps itself. The others (temper, material, origin location, boundary)
    /// stand for types the computations know, and asset type, make-up, confidence and
    /// responsibility are fixed vocabularies of the record.
    pub const EDITABLE: [LookupKind; 5] = [
        LookupKind::CauseCategory,
        LookupKind::OriginType,
        LookupKind::CustodyAction,
        LookupKind::Status,
        LookupKind::ViewingMode,
    ];

    pub fn is_editable(self) -> bool {
        LookupKind::EDITABLE.contains(&self)
    }
}

fn entry(conn: &Connection, kind: LookupKind, code: &str) -> Result<LookupEntry, StoreError> {
    refdata::load_lookups(conn, Some(kind))?
        .into_iter()
        .find(|e| e.code == code)
        .ok_or_else(|| {
            StoreError::invalid(
                format!("{} code", kind.as_str()),
                format!("no entry {code}"),
            )
        })
}

fn check_editable(kind: LookupKind) -> Result<(), StoreError> {
    if kind.is_editable() {
        return Ok(());
    }
    Err(StoreError::invalid(
        "lookup kind",
        format!("{} cannot be changed from the tool", kind.as_str()),
    ))
}

/// A label: not blank, no control characters, and not the label or code of another entry of
/// the same list (filters accept either, so each must name one entry).
fn check_label(
    conn: &Connection,
    kind: LookupKind,
    code: &str,
    label: &str,
) -> Result<(), StoreError> {
    let field = format!("{} label", kind.as_str());
    if label.trim().is_empty() {
        return Err(StoreError::invalid(field, "must not be empty"));
    }
    if label.trim() != label {
        return Err(StoreError::invalid(
            field,
            "must not start or end with spaces",
        ));
    }
    if label.chars().any(char::is_control) {
        return Err(StoreError::invalid(
            field,
            "must not contain control characters",
        ));
    }
    if label.chars().count() > 120 {
        return Err(StoreError::invalid(field, "is longer than 120 characters"));
    }
    for other in refdata::load_lookups(conn, Some(kind))? {
        if other.code == code {
            continue;
        }
        if other.label.to_lowercase() == label.to_lowercase()
            || other.code.to_lowercase() == label.to_lowercase()
        {
            return Err(StoreError::invalid(
                field,
                format!("\"{label}\" already names {}", other.code),
            ));
        }
    }
    Ok(())
}

fn replace(
    conn: &Connection,
    chain: &mut Chain,
    before: &LookupEntry,
    after: &LookupEntry,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    conn.prepare_cached(
        "UPDATE lookup SET label = ?3, retired = ?4 WHERE kind = ?1 AND code = ?2",
    )?
    .execute(params![
        after.kind.as_str(),
        after.code,
        after.label,
        i64::from(after.retired)
    ])?;
    chain.record(
        conn,
        stamp,
        LOOKUP,
        &refdata::lookup_key(after),
        Some(&canon::canonical(before)?),
        Some(&canon::canonical(after)?),
    )
}

impl Store {
    /// Add an entry at the end of its list.
    pub fn add_lookup(
        &mut self,
        kind: LookupKind,
        code: &str,
        label: &str,
        stamp: &Stamp,
    ) -> Result<LookupEntry, StoreError> {
        check_editable(kind)?;
        check_code(&format!("{} code", kind.as_str()), code)?;
        let made = self.write_one(stamp, |c, ch| {
            check_label(c, kind, code, label)?;
            let last: Option<i64> = c
                .prepare_cached("SELECT max(sort_order) FROM lookup WHERE kind = ?1")?
                .query_row([kind.as_str()], |r| r.get(0))
                .optional()?
                .flatten();
            let e = LookupEntry {
                kind,
                code: code.to_string(),
                label: label.to_string(),
                sort_order: last.unwrap_or(0) + 10,
                note: String::new(),
                retired: false,
            };
            refdata::insert_lookup(c, ch, &e, stamp)?;
            Ok(e)
        })?;
        self.load_lookups()?;
        Ok(made)
    }

    /// Give an entry a new label; its code, and so every record that holds it, stays.
    pub fn rename_lookup(
        &mut self,
        kind: LookupKind,
        code: &str,
        label: &str,
        stamp: &Stamp,
    ) -> Result<LookupEntry, StoreError> {
        check_editable(kind)?;
        self.write_one(stamp, |c, ch| {
            let before = entry(c, kind, code)?;
            check_label(c, kind, code, label)?;
            let after = LookupEntry {
                label: label.to_string(),
                ..before.clone()
            };
            if after != before {
                replace(c, ch, &before, &after, stamp)?;
            }
            Ok(after)
        })
    }

    /// Hide an entry from the pick-lists of new work; the records that hold it keep it.
    pub fn retire_lookup(
        &mut self,
        kind: LookupKind,
        code: &str,
        stamp: &Stamp,
    ) -> Result<LookupEntry, StoreError> {
        check_editable(kind)?;
        if kind == LookupKind::Status && code == DEFAULT_STATUS {
            return Err(StoreError::invalid(
                "status code",
                format!("{DEFAULT_STATUS} is the status every new incident starts with; it cannot be retired"),
            ));
        }
        self.write_one(stamp, |c, ch| {
            let before = entry(c, kind, code)?;
            let in_use = refdata::load_lookups(c, Some(kind))?
                .iter()
                .filter(|e| !e.retired && e.code != code)
                .count();
            if in_use == 0 {
                return Err(StoreError::invalid(
                    format!("{} code", kind.as_str()),
                    format!("{code} is the last entry in use; add another before retiring it"),
                ));
            }
            let after = LookupEntry {
                retired: true,
                ..before.clone()
            };
            if after != before {
                replace(c, ch, &before, &after, stamp)?;
            }
            Ok(after)
        })
    }

    /// Offer a retired entry in the pick-lists again.
    pub fn restore_lookup(
        &mut self,
        kind: LookupKind,
        code: &str,
        stamp: &Stamp,
    ) -> Result<LookupEntry, StoreError> {
        check_editable(kind)?;
        self.write_one(stamp, |c, ch| {
            let before = entry(c, kind, code)?;
            let after = LookupEntry {
                retired: false,
                ..before.clone()
            };
            if after != before {
                replace(c, ch, &before, &after, stamp)?;
            }
            Ok(after)
        })
    }

    /// A pick-list for new work: the entries of a list in use, in display order.
    pub fn lookups_in_use(&self, kind: LookupKind) -> Result<Vec<LookupEntry>, StoreError> {
        Ok(self
            .lookups(kind)?
            .into_iter()
            .filter(|e| !e.retired)
            .collect())
    }
}
