//! A large push sends, beside each staged incident image, that image's read-table row (its
//! facts, reference and the text of its words, worked out by `fill_facts::fact_row`, the
//! values the fleet's view gives) and its digest, so that the fleet need not parse a million
//! images again to fill its read tables (schema/fleet/0010_push_facts.sql). The fleet uses a
//! sent row only for an incident it wrote with exactly that image, checks a random sample of
//! them against its own view inside the server (one that differs refuses the push), and
//! `verify` on the fleet works every row out again.

use std::collections::{HashMap, HashSet};

use postgres::binary_copy::BinaryCopyInWriter;
use postgres::types::{ToSql, Type};
use postgres::Transaction;
use rusqlite::Connection;

use super::fill_facts::fact_row;
use super::FleetError;
use crate::store::audit::INCIDENT;
use crate::store::{canon, outbox};

/// A push that lists at least this many incidents sends their read-table rows.
pub(crate) const FACTS_FROM: usize = 10_000;

const COPY: &str = "COPY push_records (entity, id, image, digest, reference, found_on, asset, \
     position, site, product, supplier, lot, status, cause, origin_type, temper, stress_pa, \
     applied_stress_pa, words) FROM STDIN (FORMAT binary)";

const TYPES: [Type; 19] = [
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::TEXT,
    Type::FLOAT8,
    Type::FLOAT8,
    Type::TEXT,
];

/// Stage the listed records' images, each incident's with its digest and read-table row
/// (none when its image gives none: the fleet's view then works it out).
pub(crate) fn stage_images_with_facts(
    tx: &mut Transaction<'_>,
    conn: &Connection,
    bench: &str,
    listed: &HashMap<String, HashSet<String>>,
) -> Result<(), FleetError> {
    let sink = tx.copy_in(COPY)?;
    let mut writer = BinaryCopyInWriter::new(sink, &TYPES);
    let mut failure: Option<FleetError> = None;
    let none_text: Option<&str> = None;
    let none_number: Option<f64> = None;
    outbox::for_each_listed_image(conn, listed, |entity, id, image| {
        let row = if entity == INCIDENT {
            // an image that is no JSON has no row here; the fleet's view reads it
            fact_row(bench, image).ok().flatten()
        } else {
            None
        };
        let written = match &row {
            Some(f) => {
                let digest = canon::sha256_hex(image.as_bytes());
                let values: [&(dyn ToSql + Sync); 19] = [
                    &entity,
                    &id,
                    &image,
                    &digest,
                    &f.reference,
                    &f.found_on,
                    &f.asset,
                    &f.position,
                    &f.site,
                    &f.product,
                    &f.supplier,
                    &f.lot,
                    &f.status,
                    &f.cause,
                    &f.origin_type,
                    &f.temper,
                    &f.stress_pa,
                    &f.applied_stress_pa,
                    &f.words,
                ];
                writer.write(&values)
            }
            None => {
                let text: &(dyn ToSql + Sync) = &none_text;
                let number: &(dyn ToSql + Sync) = &none_number;
                let mut values: Vec<&(dyn ToSql + Sync)> = vec![&entity, &id, &image];
                values.extend(std::iter::repeat_n(text, 13));
                values.extend([number, number, text]);
                writer.write(&values)
            }
        };
        written.map_err(|e| {
            failure = Some(FleetError::from(e));
            crate::store::StoreError::Database("copy".into())
        })
    })
    .map_err(|e| failure.take().unwrap_or_else(|| FleetError::from(e)))?;
    writer.finish()?;
    Ok(())
}
