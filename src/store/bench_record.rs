//! The examination the bench calculator stores: the readings as typed, the analysis with what
//! it was given, and the hypotheses tried beside it. This decides the stored JSON; the
//! interface hands over what it holds.

use chrono::{DateTime, Utc};

use super::model::{Examination, FlawMeasurement, Measured, MirrorReading};
use shardlog_core::fracture::{Analysis, AnalysisInput};
use shardlog_core::loads;
use shardlog_core::units::{self, Dimension, Unit};

/// The lines typed for one boundary (one radius with its unit each; blank lines are skipped).
#[derive(Debug, Clone, Copy)]
pub struct BoundaryLines<'a> {
    /// The boundary's lookup code (`mirror_mist`, `mist_hackle`, `branching`).
    pub boundary: &'a str,
    /// What the user calls the input, for a refusal.
    pub label: &'a str,
    pub lines: &'a [String],
}

/// The thermal hypothesis, σ = k·E·α·ΔT, as tried on the bench.
#[derive(Debug, Clone, PartialEq)]
pub struct ThermalHypothesis {
    pub delta_t_k: f64,
    pub restraint: f64,
    pub stress_pa: f64,
    /// The verdict against the measured stress, in words, when there is one.
    pub verdict: Option<String>,
}

/// A load hypothesis of any kind, as tried on the bench.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadHypothesis<'a> {
    pub kind: &'a str,
    /// The inputs in words, e.g. "ΔT 30 K, k = 1".
    pub inputs: &'a str,
    pub outcome: &'a loads::Outcome,
    /// The verdict against the measured stress, in words, when there is one.
    pub verdict: Option<String>,
    /// Its inputs as typed, by form key (so that reopening the bench shows them again).
    pub fields: Vec<(String, String)>,
}

/// Everything the bench saves into an incident.
#[derive(Debug, Clone)]
pub struct BenchRecord<'a> {
    /// Who saved it, and when.
    pub analyst: &'a str,
    pub at: DateTime<Utc>,
    pub readings: Vec<BoundaryLines<'a>>,
    pub input: &'a AnalysisInput,
    pub analysis: &'a Analysis,
    pub thermal: Option<ThermalHypothesis>,
    pub load: Option<LoadHypothesis<'a>>,
}

/// The examination to store: the incident's last examination when it is still empty (no
/// readings, no result), otherwise a new one by the analyst on the day; its readings, flaw
/// and result replaced by the bench's. The error names what could not be stored.
pub fn bench_examination(
    last: Option<&Examination>,
    record: &BenchRecord,
) -> Result<Examination, String> {
    let mut exam = match last {
        Some(e) if e.result.is_none() && e.readings.is_empty() => e.clone(),
        _ => Examination {
            examined_on: Some(record.at.date_naive()),
            analyst: record.analyst.to_string(),
            ..Examination::empty()
        },
    };
    exam.material = Some(record.input.material.key.replace('-', "_"));
    exam.readings = readings(record)?;
    if let Some(m) = record.input.measured_flaw_m {
        let text = units::format_exact(m, Unit::Micrometre);
        if let Ok(depth) = Measured::parse(&text, Dimension::Length) {
            let shape = record
                .analysis
                .flaw
                .as_ref()
                .map(|f| f.geometry_label.clone())
                .unwrap_or_default();
            exam.flaw = Some(FlawMeasurement {
                depth: Some(depth),
                width: exam.flaw.as_ref().and_then(|f| f.width.clone()),
                shape,
            });
        }
    }
    let mut result = super::analysis::to_result(record.analysis, record.at)
        .map_err(|e| format!("storing the analysis: {e}"))?;
    // what the bench was given beyond the stored readings (temper, constants, geometry…)
    // and the hypotheses tried beside it ride along with the analysis
    if let serde_json::Value::Object(map) = &mut result.analysis {
        map.insert(
            "bench_input".to_string(),
            serde_json::to_value(record.input).unwrap_or(serde_json::Value::Null),
        );
        if let Some(t) = &record.thermal {
            map.insert("thermal_hypothesis".to_string(), thermal_json(t));
        }
        if let Some(h) = &record.load {
            map.insert("load_hypothesis".to_string(), load_json(h));
        }
    }
    exam.result = Some(result);
    Ok(exam)
}

fn readings(record: &BenchRecord) -> Result<Vec<MirrorReading>, String> {
    let mut out = Vec::new();
    for b in &record.readings {
        for line in b.lines.iter().filter(|l| !l.trim().is_empty()) {
            let radius = Measured::parse(line, Dimension::Length)
                .map_err(|e| format!("{}: {e}", b.label))?;
            out.push(MirrorReading {
                boundary: b.boundary.to_string(),
                radius,
                magnification: None,
                analyst: record.analyst.to_string(),
                note: String::new(),
            });
        }
    }
    Ok(out)
}

fn thermal_json(t: &ThermalHypothesis) -> serde_json::Value {
    serde_json::json!({
        "method": loads::thermal::THERMAL_METHOD,
        "delta_t_k": t.delta_t_k,
        "restraint": t.restraint,
        "stress_pa": t.stress_pa,
        "verdict": t.verdict,
    })
}

fn load_json(h: &LoadHypothesis) -> serde_json::Value {
    serde_json::json!({
        "kind": h.kind,
        "inputs": h.inputs,
        "method": h.outcome.method,
        "force_n": h.outcome.force,
        "stress_pa": h.outcome.stress,
        "deflection_m": h.outcome.deflection,
        "warnings": h.outcome.warnings.iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
        "verdict": h.verdict,
        "fields": h
            .fields
            .iter()
            .map(|(k, v)| (k.clone(), serde_json::Value::String(v.clone())))
            .collect::<serde_json::Map<String, serde_json::Value>>(),
    })
}
