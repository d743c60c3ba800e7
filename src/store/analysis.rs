//! The analysis as stored: a stored examination turned into the fracture core's input, and
//! the core's `Analysis` into the stored [`ComputedResult`]. Pure: no database here.

use chrono::{DateTime, Utc};

use super::model::*;
use super::own_materials::MaterialBook;
use shardlog_core::fracture::{
    self, AnalysisInput, Boundary, BoundaryReadings, FractureError, Origin, OriginLocation, Temper,
};

/// Whether the origin of an examination sits in the interior (tensile core).
fn interior_origin(inc: &Incident, exam: &Examination) -> bool {
    inc.pattern
        .origin_location
        .as_deref()
        .and_then(|code| code.parse::<OriginLocation>().ok())
        .is_some_and(|location| location.origin() == Origin::Interior)
        || matches!(
            exam.origin_type.as_deref(),
            Some("interior_core") | Some("inclusion_nis")
        )
}

/// The core's input for one examination of an incident: the bench's rules (the material of
/// the examination, else of the first ply, from the library or the bench's own materials in
/// `book`; the origin location of the pattern chooses the origin and the default flaw
/// geometry), shared by `compute`, the import, the report and `verify`.
pub fn analysis_input(
    inc: &Incident,
    exam: &Examination,
    book: &MaterialBook,
) -> Result<AnalysisInput, FractureError> {
    let ply = inc.glass.plies.first();
    let material_code = exam
        .material
        .clone()
        .or_else(|| ply.and_then(|p| p.material.clone()))
        .unwrap_or_else(|| "soda_lime".to_string());
    let material = book.find(&material_code).ok_or_else(|| {
        FractureError::invalid(
            "material",
            format!("\"{material_code}\" is neither in the material library nor an own material"),
            format!("one of {}", book.keys().join(", ")),
        )
    })?;
    let mut input = AnalysisInput::new(material);
    for r in &exam.readings {
        let b: Boundary = r.boundary.parse().map_err(|_| {
            FractureError::invalid(
                "boundary",
                format!("\"{}\" is not a boundary", r.boundary),
                "mirror_mist, mist_hackle or branching",
            )
        })?;
        match input.readings.iter_mut().find(|g| g.boundary == b) {
            Some(g) => g.radii_m.push(r.radius.si),
            None => input.readings.push(BoundaryReadings {
                boundary: b,
                radii_m: vec![r.radius.si],
            }),
        }
    }
    input.temper = ply
        .and_then(|p| p.temper.as_deref())
        .and_then(|code| code.parse::<Temper>().ok());
    input.origin = if interior_origin(inc, exam) {
        Origin::Interior
    } else {
        Origin::Surface
    };
    // an edge or corner origin implies an edge or corner crack unless one is chosen
    input.flaw = inc
        .pattern
        .origin_location
        .as_deref()
        .and_then(|code| code.parse::<OriginLocation>().ok())
        .and_then(|location| location.default_geometry(0.8));
    input.thickness_m = ply.and_then(|p| p.thickness_m);
    input.measured_flaw_m = exam
        .flaw
        .as_ref()
        .and_then(|f| f.depth.as_ref())
        .map(|m| m.si);
    Ok(input)
}

/// The stored form of an analysis.
pub fn to_result(
    analysis: &fracture::Analysis,
    computed_at: DateTime<Utc>,
) -> Result<ComputedResult, serde_json::Error> {
    let figures = to_figures(analysis, computed_at);
    let mut constants = serde_json::Map::new();
    for b in &analysis.boundaries {
        constants.insert(
            b.constant.symbol.clone(),
            serde_json::to_value(&b.constant)?,
        );
    }
    if let Some(f) = &analysis.flaw {
        constants.insert(
            f.toughness.symbol.clone(),
            serde_json::to_value(&f.toughness)?,
        );
    }
    constants.insert("residual".into(), serde_json::to_value(&analysis.residual)?);
    Ok(ComputedResult {
        constants: serde_json::Value::Object(constants),
        analysis: serde_json::to_value(analysis)?,
        ..figures
    })
}

/// The figures of [`to_result`] (stresses, flaw size, time, code version) without its two
/// JSON values, which are left null: what the checks of an import read.
pub fn to_figures(analysis: &fracture::Analysis, computed_at: DateTime<Utc>) -> ComputedResult {
    ComputedResult {
        computed_at: truncate_ms(computed_at),
        code_version: super::CODE_VERSION.to_string(),
        stress_pa: Some(analysis.stress_pa),
        stress_low_pa: Some(analysis.stress_low_pa),
        stress_high_pa: Some(analysis.stress_high_pa),
        residual_pa: Some(analysis.residual.at_origin_pa),
        applied_stress_pa: Some(analysis.applied_stress_pa),
        flaw_size_m: analysis.flaw.as_ref().map(|f| f.size_m),
        constants: serde_json::Value::Null,
        analysis: serde_json::Value::Null,
    }
}

/// Why a result could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ComputeError {
    #[error(transparent)]
    Fracture(#[from] FractureError),
    #[error("storing the analysis: {0}")]
    Serialize(String),
}

/// Run the fracture core on one examination (the bench calculator can call this live).
pub fn compute(
    inc: &Incident,
    exam: &Examination,
    computed_at: DateTime<Utc>,
    book: &MaterialBook,
) -> Result<ComputedResult, ComputeError> {
    let input = analysis_input(inc, exam, book)?;
    let analysis = fracture::analyze(&input)?;
    let mut result =
        to_result(&analysis, computed_at).map_err(|e| ComputeError::Serialize(e.to_string()))?;
    keep_own_material(&mut result, &input, book);
    Ok(result)
}

/// Where a result computed with an own material keeps the constants it was computed with.
pub const OWN_MATERIAL: &str = "own_material";

/// Keep the own material a result was computed with beside its analysis (code, revision and
/// every constant), so that recomputing it later uses those constants even after the
/// material was changed. Library materials are not copied: they change only with the build.
pub fn keep_own_material(result: &mut ComputedResult, input: &AnalysisInput, book: &MaterialBook) {
    let Some(own) = book.own(&input.material.key) else {
        return;
    };
    if let serde_json::Value::Object(map) = &mut result.analysis {
        map.insert(
            OWN_MATERIAL.to_string(),
            serde_json::json!({
                "code": own.code,
                "revision": own.revision,
                "material": input.material,
            }),
        );
    }
}

/// The own material a stored result says it was computed with, if any.
pub fn kept_own_material(result: &ComputedResult) -> Option<fracture::materials::Material> {
    result
        .analysis
        .get(OWN_MATERIAL)
        .and_then(|v| v.get("material"))
        .and_then(|v| serde_json::from_value(v.clone()).ok())
}

/// What this shardlog computes for a stored examination that has readings and a result:
/// from what the bench was given when the result carries it (`bench_input`: constants,
/// temper, geometry as typed there) with the stored readings in place of its own, else from
/// the record as [`compute`] does. None when there is nothing to recompute.
pub fn recompute_stored(
    inc: &Incident,
    exam: &Examination,
    book: &MaterialBook,
) -> Option<Result<fracture::Analysis, FractureError>> {
    let result = exam.result.as_ref()?;
    if exam.readings.is_empty() {
        return None;
    }
    let from_bench = result
        .analysis
        .get("bench_input")
        .and_then(|v| serde_json::from_value::<AnalysisInput>(v.clone()).ok());
    // the constants kept with the result, when it was computed with an own material
    let kept = kept_own_material(result);
    let record = match (analysis_input(inc, exam, book), &kept) {
        (Err(_), Some(m)) => analysis_input(inc, exam, &MaterialBook::holding(m.clone())),
        (r, _) => r,
    };
    let input = match (from_bench, record) {
        (Some(mut bench), Ok(record)) => {
            bench.readings = record.readings;
            bench
        }
        (None, Ok(mut record)) => {
            if let Some(m) = kept {
                record.material = m;
            }
            record
        }
        (_, Err(e)) => return Some(Err(e)),
    };
    Some(fracture::analyze(&input))
}

/// How far a stored figure may be from the recomputed one and still be the same: rounding
/// only (relative 1e-5: a CSV keeps six significant digits; for figures near zero, 1e-5 of
/// the unit).
const SAME_WITHIN: f64 = 1e-5;

/// A stored figure against the recomputed one; a figure not stored (a CSV import keeps only
/// the headline figures) contradicts nothing.
fn same(stored: Option<f64>, fresh: Option<f64>, unit: f64) -> bool {
    match (stored, fresh) {
        (None, _) => true,
        (Some(x), Some(y)) => (x - y).abs() <= SAME_WITHIN * x.abs().max(y.abs()).max(unit),
        _ => false,
    }
}

/// A figure compared: name, stored, recomputed, its unit in SI, how it is shown.
type Figure<'a> = (
    &'a str,
    Option<f64>,
    Option<f64>,
    f64,
    &'a dyn Fn(Option<f64>) -> String,
);

/// Whether a stored result still follows from the examination's readings and constants:
/// None when a recomputation agrees within rounding, else the first figure that differs,
/// with both values and units. An examination without readings has nothing to recompute
/// from (a figure stated in a CSV import): None.
pub fn stored_result_differs(
    inc: &Incident,
    exam: &Examination,
    book: &MaterialBook,
) -> Option<String> {
    let stored = exam.result.as_ref()?;
    let fresh = match recompute_stored(inc, exam, book)? {
        Ok(analysis) => match to_result(&analysis, stored.computed_at) {
            Ok(r) => r,
            Err(e) => return Some(format!("the recomputed result cannot be stored ({e})")),
        },
        Err(e) => {
            return Some(format!(
                "a result is stored, but its readings give none ({e})"
            ))
        }
    };
    let mpa = |v: Option<f64>| v.map_or("none".to_string(), |x| format!("{:.3} MPa", x / 1e6));
    let um = |v: Option<f64>| v.map_or("none".to_string(), |x| format!("{:.3} µm", x * 1e6));
    let figures: [Figure; 6] = [
        ("net stress", stored.stress_pa, fresh.stress_pa, 1.0, &mpa),
        (
            "net stress low",
            stored.stress_low_pa,
            fresh.stress_low_pa,
            1.0,
            &mpa,
        ),
        (
            "net stress high",
            stored.stress_high_pa,
            fresh.stress_high_pa,
            1.0,
            &mpa,
        ),
        (
            "residual stress",
            stored.residual_pa,
            fresh.residual_pa,
            1.0,
            &mpa,
        ),
        (
            "applied stress",
            stored.applied_stress_pa,
            fresh.applied_stress_pa,
            1.0,
            &mpa,
        ),
        (
            "flaw size",
            stored.flaw_size_m,
            fresh.flaw_size_m,
            1e-9,
            &um,
        ),
    ];
    figures
        .iter()
        .find(|(_, s, f, unit, _)| !same(*s, *f, *unit))
        .map(|(name, s, f, _, show)| {
            format!(
                "the stored {name} {} does not follow from its readings and constants (recomputed {}; the stored figure came from {})",
                show(*s),
                show(*f),
                stored.code_version
            )
        })
}
