//! Incidents, the whole aggregate (plies, examinations with readings and results, custody,
//! attachments), by job:
//!
//! - `write`: new, changed (revision-checked) and deleted incidents, each with its audit row;
//!   `refs`: the codes of site, asset, supplier, product and lot turned into keys.
//! - `read`: one incident by reference or id; `children`: every incident in one ordered scan.
//! - `list`: the log, a page at a time in keyset order, and the filter as SQL.
//! - `validate`: what a valid incident is.
//! - `facts`: the flat facts the fleet statistics read, and their check.
//! - `history`: an incident's audit history.

use super::model::*;

// The column lists of the reading queries, as macros so that queries can `concat!` them;
// defined before the modules below so that each of them can use them.

/// The columns `read::incident_row` reads: an incident with the codes of its site, asset,
/// supplier, product and lot (a macro so that the queries can `concat!` it).
macro_rules! incident_select {
    () => {
        concat!(incident_select!(cols), ", i.installed_on", incident_select!(from))
    };
    // a database held before schema 0008 (the upgrade tests): no installed_on column
    (legacy) => {
        concat!(incident_select!(cols), ", NULL", incident_select!(from))
    };
    (cols) => {
        "SELECT i.seq, i.id, i.reference, i.revision, i.created_at, i.updated_at, a.code, i.position, s.code,
                i.found_on, i.broken_on, i.temperature_c, i.sun, i.weather, i.reporter, i.how_found,
                su.code, p.code, l.code, i.makeup, i.width_m, i.height_m, i.crack_count, i.branching,
                i.fragment_count, i.origin_location, i.tension_face, i.cause_category, i.cause_factors,
                i.cause_confidence, i.cause_responsibility, i.cause_note, i.status, i.description, i.notes,
                i.stress_pa, i.applied_stress_pa, i.origin_type, i.temper"
    };
    (from) => {
        " FROM incidents i
         LEFT JOIN assets a ON a.id = i.asset_id
         LEFT JOIN sites s ON s.id = i.site_id
         LEFT JOIN suppliers su ON su.id = i.supplier_id
         LEFT JOIN products p ON p.id = i.product_id
         LEFT JOIN lots l ON l.id = i.lot_id"
    };
}

/// Columns of a ply (table alias `p`), read by `read::ply_row`.
macro_rules! ply_cols {
    () => {
        "p.material, p.temper, p.thickness_m, p.coating, p.edge_finish"
    };
}

/// Columns of an examination (alias `e`), read by `read::exam_row`.
macro_rules! exam_cols {
    () => {
        "e.id, e.examined_on, e.analyst, e.origin_type, e.material, e.flaw_present, e.flaw_depth_text,
         e.flaw_depth_unit, e.flaw_depth_m, e.flaw_width_text, e.flaw_width_unit, e.flaw_width_m,
         e.flaw_shape, e.notes"
    };
}

/// Columns of a mirror reading (alias `m`), read by `read::reading_row`.
macro_rules! reading_cols {
    () => {
        "m.boundary, m.value_text, m.unit, m.value_m, m.magnification, m.analyst, m.note, m.viewing"
    };
    (legacy) => {
        "m.boundary, m.value_text, m.unit, m.value_m, m.magnification, m.analyst, m.note, NULL"
    };
}

/// Columns of an examination's result (alias `r`), read by `read::result_row`.
macro_rules! result_cols {
    () => {
        "r.computed_at, r.code_version, r.stress_pa, r.stress_low_pa, r.stress_high_pa, r.residual_pa,
         r.applied_stress_pa, r.flaw_size_m, r.constants_json, r.analysis_json"
    };
}

/// Columns of a custody entry (alias `c`), read by `read::custody_row`.
macro_rules! custody_cols {
    () => {
        "c.id, c.at, c.action, c.who, c.location, c.note"
    };
}

/// Columns of an attachment (alias `t`), read by `read::attachment_row`.
macro_rules! attachment_cols {
    () => {
        "t.id, t.sha256, t.file_name, t.media_type, t.size_bytes, t.caption, t.added_at"
    };
}

mod as_of;
mod children;
mod damage;
mod facts;
mod history;
mod list;
mod read;
mod refs;
mod revert;
mod validate;
mod write;

pub(crate) use children::for_each_incident;
pub(crate) use children::for_each_readable_incident;
pub use facts::StatsInput;
pub(crate) use facts::{fill_fleet_facts, fill_fleet_facts_after, fleet_facts_problems};
pub(crate) use read::{load, resolve_key};
pub(crate) use refs::{RefCache, Refs};
pub(crate) use validate::validate;
pub use write::check_bench_code;
pub(crate) use write::{
    bench_code, format_reference, insert_new, insert_prepared, next_reference, prepare,
    prepare_rendered, put_from_fleet, reference_prefix, Prepared,
};

/// Columns kept for the log and statistics, derived from the aggregate.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Derived {
    pub stress_pa: Option<f64>,
    pub applied_stress_pa: Option<f64>,
    pub origin_type: Option<String>,
    pub temper: Option<String>,
}

pub(crate) fn derive(inc: &Incident) -> Derived {
    let current = inc.current_result();
    let origin_type = current
        .and_then(|(e, _)| e.origin_type.clone())
        .or_else(|| {
            inc.examinations
                .iter()
                .rev()
                .find_map(|e| e.origin_type.clone())
        });
    Derived {
        stress_pa: current.and_then(|(_, r)| r.stress_pa),
        applied_stress_pa: current.and_then(|(_, r)| r.applied_stress_pa),
        origin_type,
        temper: inc.glass.plies.first().and_then(|p| p.temper.clone()),
    }
}

/// The text that free-text search covers.
pub(crate) fn search_body(inc: &Incident) -> String {
    let mut parts: Vec<&str> = vec![&inc.reference, &inc.position, &inc.description, &inc.notes];
    if let Some(a) = &inc.asset {
        parts.push(a);
    }
    parts.push(&inc.reporter);
    parts.push(&inc.how_found);
    if let Some(c) = &inc.cause {
        parts.push(&c.note);
        for f in &c.factors {
            parts.push(f);
        }
    }
    for e in &inc.examinations {
        parts.push(&e.notes);
    }
    for c in &inc.custody {
        parts.push(&c.note);
    }
    for a in &inc.attachments {
        parts.push(&a.caption);
    }
    parts.retain(|p| !p.is_empty());
    parts.join("\n")
}
