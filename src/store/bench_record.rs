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
    /// How the readings were viewed: a `viewing_mode` lookup code, None when not recorded.
    pub viewing: Option<&'a str>,
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
    }
    attach_hypotheses(&mut result, record.thermal.as_ref(), record.load.as_ref());
    exam.result = Some(result);
    Ok(exam)
}

/// Save the hypotheses tried beside a result into it (`thermal_hypothesis`,
/// `load_hypothesis`), as the bench does; [`saved_hypotheses`] reads them back.
pub fn attach_hypotheses(
    result: &mut super::model::ComputedResult,
    thermal: Option<&ThermalHypothesis>,
    load: Option<&LoadHypothesis>,
) {
    if let serde_json::Value::Object(map) = &mut result.analysis {
        if let Some(t) = thermal {
            map.insert("thermal_hypothesis".to_string(), thermal_json(t));
        }
        if let Some(h) = load {
            map.insert("load_hypothesis".to_string(), load_json(h));
        }
    }
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
                viewing: record.viewing.map(str::to_string),
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

/// A load hypothesis as saved with an examination, read back for the reports.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct SavedHypothesis {
    /// What kind of load: "thermal", "impact", "plate", "sphere impact"…
    pub kind: String,
    /// The inputs in words ("ΔT 30 K, restraint k = 1").
    pub inputs: String,
    /// The method and its source, as the core names it.
    pub method: String,
    /// The stress the hypothesis produces, Pa.
    pub stress_pa: Option<f64>,
    /// The verdict against the measured stress in words, when one was made.
    pub verdict: Option<String>,
    /// The verdict's finding: consistent, too weak or far too strong.
    pub finding: Option<String>,
    /// Whether a sound part should have survived this load (`Some(true)`), should have
    /// broken (`Some(false)`), or no strength lower bound was given (`None`).
    pub sound_part_survives: Option<bool>,
}

/// The hypotheses saved in a stored result (`thermal_hypothesis`, `load_hypothesis`). The
/// finding and the sound-part answer are read from the verdict's words, which
/// `loads::verdict::judge` writes in fixed form (its finding's label first; "should break a
/// sound part" or "a sound part should have survived").
pub fn saved_hypotheses(result: &super::model::ComputedResult) -> Vec<SavedHypothesis> {
    let mut out = Vec::new();
    let text = |v: &serde_json::Value, k: &str| v.get(k).and_then(|x| x.as_str()).map(String::from);
    let num = |v: &serde_json::Value, k: &str| v.get(k).and_then(|x| x.as_f64());
    if let Some(t) = result.analysis.get("thermal_hypothesis") {
        let inputs = match (num(t, "delta_t_k"), num(t, "restraint")) {
            (Some(dt), Some(k)) => format!(
                "temperature difference ΔT {} K, restraint k = {}",
                units::fmt_sig(dt, 3),
                units::fmt_sig(k, 3)
            ),
            _ => String::new(),
        };
        out.push(saved(
            "thermal",
            inputs,
            t,
            text(t, "method"),
            num(t, "stress_pa"),
        ));
    }
    if let Some(h) = result.analysis.get("load_hypothesis") {
        out.push(saved(
            &text(h, "kind").unwrap_or_else(|| "load".into()),
            text(h, "inputs").unwrap_or_default(),
            h,
            text(h, "method"),
            num(h, "stress_pa"),
        ));
    }
    out
}

fn saved(
    kind: &str,
    inputs: String,
    v: &serde_json::Value,
    method: Option<String>,
    stress_pa: Option<f64>,
) -> SavedHypothesis {
    let verdict = v.get("verdict").and_then(|x| x.as_str()).map(String::from);
    let (finding, sound_part_survives) =
        verdict.as_deref().map(read_verdict).unwrap_or((None, None));
    SavedHypothesis {
        kind: kind.to_string(),
        inputs,
        method: method.unwrap_or_default(),
        stress_pa: stress_pa.filter(|x| x.is_finite()),
        verdict,
        finding,
        sound_part_survives,
    }
}

/// The finding and the sound-part answer of a verdict's words.
fn read_verdict(text: &str) -> (Option<String>, Option<bool>) {
    use loads::verdict::Finding;
    let finding = [Finding::FarTooStrong, Finding::TooWeak, Finding::Consistent]
        .into_iter()
        .find(|f| text.starts_with(f.label()))
        .map(|f| f.label().to_string());
    let survives = if text.contains("a sound part should have survived") {
        Some(true)
    } else if text.contains("should break a sound part") {
        Some(false)
    } else {
        None
    };
    (finding, survives)
}

#[cfg(test)]
mod saved_tests {
    use super::*;
    use shardlog_core::loads::verdict::{judge, Measured};

    /// The words the core writes are read back as the core's finding and sound-part answer.
    #[test]
    fn verdict_words_read_back_as_the_core_judged() {
        let m = Measured {
            stress: 20e6,
            low: 18e6,
            high: 22e6,
        };
        for (h, bound, finding, survives) in [
            (19e6, Some(45e6), "consistent", Some(true)),
            (60e6, Some(45e6), "far too strong", Some(false)),
            (5e6, None, "too weak", None),
        ] {
            let v = judge(&m, h, bound).unwrap();
            assert_eq!(
                read_verdict(&v.explanation),
                (Some(finding.to_string()), survives)
            );
        }
    }
}
