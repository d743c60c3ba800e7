//! `calibrate --save CODE`: the fitted constants stored into an own material, each with its
//! provenance ("calibrated by LAB from N specimens on DATE") and the SHA-256 of the data file.
//! An own material is updated as its next revision; a new one is made from `--from`, a
//! library material whose other constants it keeps.

use super::materials::slot;
use super::records::{edge_stamp, open};
use super::{CliError, Context};
use crate::store::StoreError;
use shardlog_core::fracture::calibration::BoundaryFit;
use shardlog_core::fracture::materials::{self, Constant, Material, Provenance};
use shardlog_core::fracture::Boundary;
use shardlog_core::text::clean;
use shardlog_core::units::{self, Unit};

/// The slot of [`super::materials::CONSTANTS`] a boundary's constant goes to.
fn slot_of(b: Boundary) -> usize {
    match b {
        Boundary::MirrorMist => 0,
        Boundary::MistHackle => 1,
        Boundary::Branching => 2,
    }
}

fn refused(e: StoreError) -> CliError {
    match e {
        StoreError::Invalid { .. } | StoreError::Duplicate { .. } => CliError::usage(e.to_string()),
        other => CliError::work(other.to_string()),
    }
}

/// The constant of one fit: the fitted value, the standard deviation of that value as its
/// spread, the provenance naming who, from how many specimens, when, and the data's digest.
fn constant(f: &BoundaryFit, lab: &str, on: chrono::NaiveDate, sha256: &str) -> Constant {
    let k = Unit::MegapascalRootMetre;
    let mut note = format!(
        "calibrated by {lab} from {} specimens on {on}; spread: standard deviation of the fitted constant (one specimen's scatter {})",
        f.n,
        units::format_sig(f.specimen_sd, k, 2)
    );
    if f.slope_flagged() {
        note.push_str(
            "; the slope of ln σ on ln R was NOT consistent with −½ (saved with --accept-slope)",
        );
    }
    Constant {
        value: f.constant,
        spread: Some(f.constant_sd),
        provenance: Provenance::Calibrated {
            note,
            sha256: sha256.to_string(),
        },
    }
}

/// Store the fits into the own material `code` and print what was saved.
/// What `calibrate` was asked to save, and the file's digest.
pub struct SaveRequest<'a> {
    pub code: &'a str,
    pub from: Option<&'a str>,
    pub lab: Option<&'a str>,
    pub accept_slope: bool,
    pub json: bool,
    pub sha256: &'a str,
}

pub fn save(
    req: &SaveRequest<'_>,
    fits: &[BoundaryFit],
    ctx: &mut Context<'_>,
) -> Result<(), CliError> {
    let code = req.code;
    if let Some(m) = materials::find(code) {
        return Err(CliError::usage(format!(
            "--save: {} is a library material and cannot be changed; save into a new code with --from {} (e.g. --save lab_{} --from {})",
            m.key,
            m.key,
            m.key.replace('-', "_"),
            m.key
        )));
    }
    let flagged: Vec<&str> = fits
        .iter()
        .filter(|f| f.slope_flagged())
        .map(|f| f.boundary.label())
        .collect();
    if !flagged.is_empty() && !req.accept_slope {
        return Err(CliError::work(format!(
            "--save: nothing was saved: the {} specimens do not follow σ = A/√R (slope not consistent with −½); check the boundaries read and the stresses, or save anyway with --accept-slope",
            flagged.join(" and ")
        )));
    }
    let stamp = edge_stamp();
    let mut store = open(&ctx.db)?;
    let lab = match req.lab {
        Some(l) => l.trim().to_string(),
        None => store
            .bench_code()
            .map_err(|e| CliError::work(e.to_string()))?
            .unwrap_or_else(|| stamp.actor.clone()),
    };
    if lab.is_empty() || lab.chars().any(char::is_control) {
        return Err(CliError::usage(
            "--lab: expected the lab's name as plain text",
        ));
    }
    let on = stamp.at.date_naive();
    let apply = |m: &mut Material| {
        for f in fits {
            *slot(m, slot_of(f.boundary)) = Some(constant(f, &lab, on, req.sha256));
        }
    };
    let existing = store.own_material(code).map_err(refused)?;
    let saved = match (existing, req.from) {
        (Some(_), Some(_)) => {
            return Err(CliError::usage(format!(
                "--from: {code} exists already; --from names the library material a new own material is made from (leave it out to update {code})"
            )))
        }
        (Some(own), None) => {
            let mut m = own.material.clone();
            apply(&mut m);
            store
                .update_own_material(code, Some(own.revision), &m, &stamp)
                .map_err(refused)?
        }
        (None, Some(base)) => {
            let mut m = materials::find(base).ok_or_else(|| {
                CliError::usage(format!(
                    "--from: '{}' is not a library material; expected one of {}",
                    clean(base),
                    materials::keys().join(", ")
                ))
            })?;
            m.name = format!("{}, calibrated by {lab} ({code})", m.name);
            apply(&mut m);
            store
                .add_own_material(code, Some(&m.key.clone()), &m, &stamp)
                .map_err(refused)?
        }
        (None, None) => {
            return Err(CliError::usage(format!(
                "--save: there is no own material {}; give --from LIBRARY-KEY to make it from a library material (e.g. --from soda-lime)",
                clean(code)
            )))
        }
    };
    // after --json's object, what was saved goes to stderr, so that stdout stays one object
    let mut stderr = std::io::stderr();
    let out: &mut dyn std::io::Write = if req.json { &mut stderr } else { ctx.out };
    for f in fits {
        writeln!(
            out,
            "saved {} = {} ± {} into own material {} (revision {}), calibrated by {} from {} specimens on {on}",
            f.boundary.constant_symbol(),
            units::format_sig(f.constant, Unit::MegapascalRootMetre, 4),
            units::format_sig(f.constant_sd, Unit::MegapascalRootMetre, 2),
            saved.code,
            saved.revision,
            clean(&lab),
            f.n
        )?;
    }
    Ok(())
}
