//! The benches' own materials as the fleet holds them: pushed as `material` records (the
//! current revision in `fleet_records`, every revision in the witnessed chains). The fleet
//! holds each stored analysis only as the digest its image pins; to show the analysis itself
//! it recomputes it and keeps it only when the digest matches. A result computed with a
//! bench's own material keeps that material's constants beside the analysis, so the
//! recomputation tries each revision of the material the fleet witnessed: exactly one gives
//! the pinned digest.

use std::rc::Rc;

use super::read::{FleetMaterials, FleetReader};
use crate::store::analysis;
use crate::store::canon;
use crate::store::model::Incident;
use crate::store::{MaterialBook, OwnMaterial, StoreError};

impl FleetReader {
    /// The fleet's own materials, read once.
    pub(super) fn own_materials(&self) -> Result<Rc<FleetMaterials>, StoreError> {
        if let Some(m) = self.materials.borrow().as_ref() {
            return Ok(m.clone());
        }
        let mut out = FleetMaterials::default();
        let current = self.query(
            "SELECT image FROM fleet_records
             WHERE entity = 'material' AND image IS NOT NULL ORDER BY origin, id",
        )?;
        let earlier = self.query(
            "SELECT after FROM bench_chain
             WHERE entity = 'material' AND after IS NOT NULL ORDER BY bench, seq",
        )?;
        let read = |image: &str| {
            canon::decanonical(image)
                .and_then(|v| serde_json::from_value::<OwnMaterial>(v).ok())
                .ok_or_else(|| {
                    StoreError::Database("a material image of the fleet cannot be read".into())
                })
        };
        for r in &current {
            let m = read(r.get(0))?;
            // the first bench (in code order) gives a code several hold
            if !out.current.iter().any(|c| c.code == m.code) {
                out.current.push(m.clone());
            }
            out.revisions.push(m);
        }
        for r in &earlier {
            let m = read(r.get(0))?;
            if !out.revisions.contains(&m) {
                out.revisions.push(m);
            }
        }
        out.current.sort_by(|a, b| a.code.cmp(&b.code));
        let out = Rc::new(out);
        *self.materials.borrow_mut() = Some(out.clone());
        Ok(out)
    }

    /// The library and the fleet's current own materials (the first bench's, in code order,
    /// where several hold one code), for a computation made for a report.
    pub(crate) fn material_book(&self) -> Result<MaterialBook, StoreError> {
        Ok(MaterialBook::new(self.own_materials()?.current.clone()))
    }

    /// Put back each stored analysis of `inc` that this build recomputes to the digest the
    /// fleet's image pins (see the module's note); the others stay the pinned digest.
    pub(super) fn restore_analyses(&self, inc: &mut Incident) -> Result<(), StoreError> {
        let snapshot = inc.clone();
        for (k, exam) in inc.examinations.iter_mut().enumerate() {
            let Some(result) = exam.result.as_mut() else {
                continue;
            };
            let Some(pinned) = result
                .analysis
                .as_str()
                .and_then(|s| s.strip_prefix("sha256:"))
                .map(str::to_string)
            else {
                continue;
            };
            let exam = &snapshot.examinations[k];
            let at = result.computed_at;
            if let Some(a) = recomputed(&snapshot, exam, &MaterialBook::library_only(), at, &pinned)
            {
                result.analysis = a;
                continue;
            }
            // an own material: each revision of its code the fleet witnessed
            let Some(code) = exam.material.clone().or_else(|| {
                snapshot
                    .glass
                    .plies
                    .first()
                    .and_then(|p| p.material.clone())
            }) else {
                continue;
            };
            if shardlog_core::fracture::materials::find(&code).is_some() {
                continue;
            }
            let materials = self.own_materials()?;
            for m in materials.revisions.iter().filter(|m| m.code == code) {
                let book = MaterialBook::new(vec![m.clone()]);
                if let Some(a) = recomputed(&snapshot, exam, &book, at, &pinned) {
                    result.analysis = a;
                    break;
                }
            }
        }
        Ok(())
    }
}

/// The analysis this build computes for one examination with `book`, as the bench stores it
/// (the own material's constants beside it), when its canonical text has the digest `pinned`.
fn recomputed(
    inc: &Incident,
    exam: &crate::store::model::Examination,
    book: &MaterialBook,
    computed_at: chrono::DateTime<chrono::Utc>,
    pinned: &str,
) -> Option<serde_json::Value> {
    let Some(Ok(fresh)) = analysis::recompute_stored(inc, exam, book) else {
        return None;
    };
    let mut result = analysis::to_result(&fresh, computed_at).ok()?;
    if let Ok(input) = analysis::analysis_input(inc, exam, book) {
        analysis::keep_own_material(&mut result, &input, book);
    }
    let plain = canon::unsigned_zeros(result.analysis);
    // as computed at the bench, or on import (which says so in the analysis)
    let mut on_import = plain.clone();
    if let serde_json::Value::Object(map) = &mut on_import {
        map.insert(
            "source".into(),
            crate::store::exchange::onepass::COMPUTED_ON_IMPORT.into(),
        );
    }
    [plain, on_import]
        .into_iter()
        .find(|v| canon::sha256_hex(canon::canonical_value(v).as_bytes()) == pinned)
}
