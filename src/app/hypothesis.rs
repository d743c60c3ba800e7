//! The load hypothesis tried beside the bench measurement (issue 7): the analyst picks a kind
//! (thermal, blunt impact by impulse, plate under pressure or a patch load), types its inputs
//! in the bench form, and sees the stress `loads::evaluate` gives next to the measured applied
//! stress, with `loads::verdict::judge`, and the K(a) curve of `loads::critical::curve`.
//!
//! The inputs are ordinary bench form items (validated by `shardlog::units` as every other
//! field); only the items of the chosen kind are in the form. Text typed for another kind is
//! kept aside and comes back when that kind is picked again.

use std::collections::HashMap;

use super::field::{Field, FieldKind, FieldValue};
use super::form::{Form, FormItem};
use super::picklist::{PickItem, PickList};
use shardlog_core::fracture::{materials, Analysis};
use shardlog_core::loads::{self, critical, plates, verdict, Hypothesis};
use shardlog_core::units::Dimension;

/// The kinds offered, as (code, label).
pub const KINDS: &[(&str, &str)] = &[
    ("thermal", "thermal: hot centre, cold edge"),
    ("impulse", "blunt impact (impulse, force only)"),
    ("plate-pressure", "plate under uniform pressure"),
    ("plate-patch", "plate under a central patch load"),
    ("sphere", "sphere impact (Hertz contact)"),
];

/// Keys of every hypothesis input (the form holds those of the chosen kind only).
pub const INPUT_KEYS: &[&str] = &[
    "delta_t",
    "h_restraint",
    "h_mass",
    "h_speed",
    "h_time",
    "h_restitution",
    "h_shape",
    "h_edges",
    "h_span",
    "h_span_b",
    "h_pressure",
    "h_force",
    "h_patch",
    "h_impactor",
    "h_sphere_d",
    "h_strength",
];

/// The pick-list that chooses the kind.
pub fn kind_pick() -> PickList {
    PickList::new(
        "hypothesis",
        "Load hypothesis",
        KINDS.iter().map(|(c, l)| PickItem::new(*c, *l)).collect(),
    )
    .required()
    .with_choice("thermal")
}

fn quantity(key: &'static str, label: &'static str, dim: Dimension, hint: &'static str) -> Field {
    Field::new(
        key,
        label,
        FieldKind::Quantity {
            dim,
            positive: true,
            optional: true,
        },
    )
    .with_hint(hint)
}

/// The form items of one kind, in order; every kind ends with the optional strength lower
/// bound of a sound pane, for the sound-part question of `loads::verdict::judge`.
pub fn inputs(kind: &str) -> Vec<FormItem> {
    let mut items = kind_inputs(kind);
    items.push(FormItem::Field(quantity(
        "h_strength",
        "Sound strength",
        Dimension::Stress,
        "lower bound of a sound pane, e.g. 45 MPa",
    )));
    items
}

fn kind_inputs(kind: &str) -> Vec<FormItem> {
    let f = FormItem::Field;
    let plate = |last: Vec<FormItem>| {
        let mut v = vec![
            FormItem::Pick(
                PickList::new(
                    "h_shape",
                    "Plate shape",
                    vec![
                        PickItem::new("rectangular", "rectangular (sides a, b)"),
                        PickItem::new("circular", "circular (diameter a)"),
                    ],
                )
                .required()
                .with_choice("rectangular"),
            ),
            FormItem::Pick(
                PickList::new(
                    "h_edges",
                    "Plate edges",
                    vec![
                        PickItem::new("simply-supported", "simply supported"),
                        PickItem::new("clamped", "clamped"),
                    ],
                )
                .required()
                .with_choice("simply-supported"),
            ),
            f(quantity(
                "h_span",
                "Span a",
                Dimension::Length,
                "side or diameter, e.g. 600 mm",
            )),
            f(quantity(
                "h_span_b",
                "Span b",
                Dimension::Length,
                "other side, e.g. 900 mm",
            )),
        ];
        v.extend(last);
        v
    };
    match kind {
        "impulse" => vec![
            f(quantity("h_mass", "Mass", Dimension::Mass, "e.g. 1.8 kg")),
            f(quantity(
                "h_speed",
                "Speed",
                Dimension::Speed,
                "e.g. 11.6 m/s",
            )),
            f(quantity(
                "h_time",
                "Contact time",
                Dimension::Time,
                "e.g. 40 ms",
            )),
            f(Field::new(
                "h_restitution",
                "Restitution e",
                FieldKind::Float { optional: true },
            )
            .with_hint("1 (rebounds), 0 (stops)")),
        ],
        "sphere" => vec![
            FormItem::Pick(
                PickList::new(
                    "h_impactor",
                    "Sphere of",
                    shardlog_core::loads::contact::IMPACTORS
                        .iter()
                        .map(|i| PickItem::new(i.key, i.name))
                        .collect(),
                )
                .required()
                .with_choice("steel"),
            ),
            f(quantity(
                "h_sphere_d",
                "Sphere diam.",
                Dimension::Length,
                "e.g. 75 mm",
            )),
            f(quantity(
                "h_mass",
                "Mass",
                Dimension::Mass,
                "solid sphere if empty",
            )),
            f(quantity(
                "h_speed",
                "Speed",
                Dimension::Speed,
                "e.g. 11.6 m/s",
            )),
        ],
        "plate-pressure" => plate(vec![f(quantity(
            "h_pressure",
            "Pressure",
            Dimension::Stress,
            "e.g. 2 kPa",
        ))]),
        "plate-patch" => plate(vec![
            f(quantity(
                "h_force",
                "Patch force",
                Dimension::Force,
                "e.g. 1 kN",
            )),
            f(quantity(
                "h_patch",
                "Patch diam.",
                Dimension::Length,
                "e.g. 10 mm",
            )),
        ]),
        _ => vec![
            f(quantity(
                "delta_t",
                "Thermal ΔT",
                Dimension::TemperatureDifference,
                "hypothesis, e.g. 30 K",
            )),
            f(Field::new(
                "h_restraint",
                "Restraint k",
                FieldKind::Number { optional: true },
            )
            .with_hint("1 (fully restrained edge)")),
        ],
    }
}

/// Swap the hypothesis inputs in `form` for those of `kind`, keeping what was typed in
/// `stash`. Focus stays on the same position (the first input after the pick-list when the
/// pick-list was just confirmed).
pub fn swap_inputs(form: &mut Form, kind: &str, stash: &mut HashMap<&'static str, String>) {
    let Some(at) = form.items.iter().position(|i| i.key() == "hypothesis") else {
        return;
    };
    let mut kept = Vec::new();
    for item in form.items.drain(..) {
        if INPUT_KEYS.contains(&item.key()) {
            match &item {
                FormItem::Field(f) => {
                    stash.insert(f.key, f.text());
                }
                FormItem::Pick(p) => {
                    stash.insert(p.key, p.chosen_code().unwrap_or("").to_string());
                }
            }
        } else {
            kept.push(item);
        }
    }
    let mut new_items = inputs(kind);
    for item in &mut new_items {
        let Some(text) = stash.get(item.key()) else {
            continue;
        };
        match item {
            FormItem::Field(f) => {
                f.set_text(text);
                f.mark_clean();
            }
            FormItem::Pick(p) => {
                if !text.is_empty() {
                    p.choose_code(text);
                    p.mark_clean();
                }
            }
        }
    }
    let tail = kept.split_off((at + 1).min(kept.len()));
    kept.extend(new_items);
    kept.extend(tail);
    form.items = kept;
    form.focus = form.focus.min(form.items.len().saturating_sub(1));
}

/// The K(a) chart's figures.
#[derive(Debug, Clone, PartialEq)]
pub struct KChart {
    /// geometry factor of the bench flaw geometry
    pub y: f64,
    /// Pa·√m
    pub k_ic: f64,
    /// net stress at the origin under the hypothesis (hypothesis + residual), Pa
    pub hypothesis_net_pa: f64,
    /// K(a) under the hypothesis
    pub curve: critical::Curve,
    /// K(a) under the measured net stress, on the same sizes
    pub measured_curve: Vec<critical::CurvePoint>,
    /// flaw size the mirror predicts, m
    pub predicted_flaw_m: f64,
    /// flaw size typed at the bench, m
    pub measured_flaw_m: Option<f64>,
}

/// A hypothesis evaluated beside the measurement.
#[derive(Debug, Clone, PartialEq)]
pub struct Check {
    pub kind: &'static str,
    /// the inputs in words, e.g. "ΔT 30 K, k = 1"
    pub summary: String,
    pub outcome: loads::Outcome,
    /// `None` when the hypothesis gives no stress (impulse: a force only)
    pub verdict: Option<Result<verdict::Verdict, String>>,
    /// measured applied stress and interval, Pa, when the readings give one
    pub measured: Option<verdict::Measured>,
    /// `Err` says why there is no chart
    pub chart: Result<KChart, String>,
}

fn kind_code(kind: &str) -> &'static str {
    KINDS
        .iter()
        .find(|(c, _)| *c == kind)
        .map(|(c, _)| *c)
        .unwrap_or("thermal")
}

/// Read an optional quantity or number of the form: `Ok(None)` when empty.
fn value(form: &Form, key: &str) -> Result<Option<f64>, String> {
    match form.field(key).map(|f| f.value()) {
        Some(Ok(FieldValue::Quantity(q))) | Some(Ok(FieldValue::Number(q))) => Ok(Some(q)),
        Some(Ok(_)) | None => Ok(None),
        Some(Err(e)) => Err(e),
    }
}

fn label_of(form: &Form, key: &str) -> &'static str {
    form.field(key).map(|f| f.label).unwrap_or("input")
}

/// Evaluate the hypothesis the form describes. `None` while none of its inputs is typed.
pub fn check(
    form: &Form,
    analysis: Option<&Analysis>,
    material: Option<&materials::Material>,
) -> Option<Result<Check, String>> {
    let kind = kind_code(&form.text("hypothesis"));
    let typed: Vec<&str> = match kind {
        "impulse" => vec!["h_mass", "h_speed", "h_time"],
        "plate-pressure" => vec!["h_span", "h_span_b", "h_pressure"],
        "plate-patch" => vec!["h_span", "h_span_b", "h_force", "h_patch"],
        "sphere" => vec!["h_sphere_d", "h_speed"],
        _ => vec!["delta_t"],
    };
    if typed.iter().all(|k| form.text(k).is_empty()) {
        return None;
    }
    Some(build(form, kind, material).and_then(|(h, summary)| {
        let strength = value(form, "h_strength")?;
        let outcome = loads::evaluate(&h).map_err(|e| e.to_string())?;
        Ok(judge(kind, summary, outcome, analysis, strength))
    }))
}

fn need(form: &Form, key: &str) -> Result<f64, String> {
    value(form, key)?.ok_or_else(|| {
        format!(
            "{}: type a value to try this hypothesis",
            label_of(form, key)
        )
    })
}

fn elastic(
    material: Option<&materials::Material>,
) -> Result<(materials::Material, loads::Elastic), String> {
    let m = material
        .cloned()
        .ok_or_else(|| "Material: pick one from the list".to_string())?;
    let (Some(e), Some(nu)) = (&m.youngs_modulus, &m.poisson) else {
        return Err(format!(
            "{} has no Young's modulus or Poisson's ratio among its constants",
            m.name
        ));
    };
    let el = loads::Elastic {
        youngs_modulus: e.value,
        poisson: nu.value,
    };
    Ok((m, el))
}

fn build(
    form: &Form,
    kind: &str,
    material: Option<&materials::Material>,
) -> Result<(Hypothesis, String), String> {
    use shardlog_core::units::{format, Unit};
    match kind {
        "impulse" => {
            let mass = need(form, "h_mass")?;
            let speed = need(form, "h_speed")?;
            let time = need(form, "h_time")?;
            let e = value(form, "h_restitution")?.unwrap_or(1.0);
            Ok((
                Hypothesis::Impulse(loads::impact::Impulse {
                    mass,
                    speed,
                    contact_time: time,
                    restitution: e,
                }),
                format!(
                    "{} at {} over {}, e = {}",
                    format(mass, Unit::Kilogram),
                    format(speed, Unit::MetrePerSecond),
                    format(time, Unit::Millisecond),
                    shardlog_core::units::fmt_sig(e, 2)
                ),
            ))
        }
        "sphere" => {
            let (_, target) = elastic(material)?;
            let imp = shardlog_core::loads::contact::find_impactor(&form.text("h_impactor"))
                .ok_or_else(|| "Sphere of: pick a material from the list".to_string())?;
            let d = need(form, "h_sphere_d")?;
            let mass = value(form, "h_mass")?;
            let speed = need(form, "h_speed")?;
            let thickness = value(form, "thickness")?.ok_or_else(|| {
                "Thickness: type the pane's thickness (above) for a sphere impact".to_string()
            })?;
            let m = mass
                .map(|m| format!(", {}", format(m, Unit::Kilogram)))
                .unwrap_or_default();
            Ok((
                Hypothesis::Sphere(shardlog_core::loads::contact::SphereImpact {
                    sphere_diameter: d,
                    sphere: imp.elastic,
                    sphere_density: imp.density,
                    mass,
                    speed,
                    target,
                    thickness,
                }),
                format!(
                    "{} sphere ⌀ {}{m} at {}",
                    imp.name,
                    format(d, Unit::Millimetre),
                    format(speed, Unit::MetrePerSecond)
                ),
            ))
        }
        "plate-pressure" | "plate-patch" => {
            let (_, material) = elastic(material)?;
            let shape = match form.text("h_shape").as_str() {
                "circular" => plates::Shape::Circular,
                _ => plates::Shape::Rectangular,
            };
            let edges = match form.text("h_edges").as_str() {
                "clamped" => plates::Edges::Clamped,
                _ => plates::Edges::SimplySupported,
            };
            let span = need(form, "h_span")?;
            let span_b = match shape {
                plates::Shape::Rectangular => Some(need(form, "h_span_b")?),
                plates::Shape::Circular => None,
            };
            let thickness = value(form, "thickness")?.ok_or_else(|| {
                "Thickness: type the pane's thickness (above) for a plate".to_string()
            })?;
            let (load, what) = if kind == "plate-pressure" {
                let p = need(form, "h_pressure")?;
                (plates::PlateLoad::Pressure(p), format(p, Unit::Kilopascal))
            } else {
                let force = need(form, "h_force")?;
                let d = need(form, "h_patch")?;
                (
                    plates::PlateLoad::Patch { force, diameter: d },
                    format!(
                        "{} on {}",
                        format(force, Unit::Newton),
                        format(d, Unit::Millimetre)
                    ),
                )
            };
            let dims = match span_b {
                Some(b) => format!(
                    "{} × {}",
                    format(span, Unit::Millimetre),
                    format(b, Unit::Millimetre)
                ),
                None => format!("⌀ {}", format(span, Unit::Millimetre)),
            };
            let edge_word = match edges {
                plates::Edges::Clamped => "clamped",
                plates::Edges::SimplySupported => "simply supported",
            };
            Ok((
                Hypothesis::Plate(plates::Plate {
                    shape,
                    edges,
                    span,
                    span_b,
                    thickness,
                    material,
                    load,
                }),
                format!(
                    "{what}, {dims}, t {}, {edge_word}",
                    format(thickness, Unit::Millimetre)
                ),
            ))
        }
        _ => {
            let m = material
                .cloned()
                .ok_or_else(|| "Material: pick one from the list".to_string())?;
            let (Some(e), Some(a)) = (&m.youngs_modulus, &m.expansion) else {
                return Err(format!(
                    "{} has no Young's modulus or expansion coefficient among its constants",
                    m.name
                ));
            };
            let dt = need(form, "delta_t")?;
            let k = value(form, "h_restraint")?.unwrap_or(1.0);
            Ok((
                Hypothesis::Thermal(loads::thermal::Thermal {
                    youngs_modulus: e.value,
                    expansion: a.value,
                    delta_t: dt,
                    restraint: k,
                }),
                format!(
                    "ΔT {}, k = {}",
                    format(dt, Unit::Kelvin),
                    shardlog_core::units::fmt_sig(k, 2)
                ),
            ))
        }
    }
}

fn judge(
    kind: &'static str,
    summary: String,
    outcome: loads::Outcome,
    analysis: Option<&Analysis>,
    strength_lower_bound: Option<f64>,
) -> Check {
    let measured = analysis.map(|a| verdict::Measured {
        stress: a.applied_stress_pa,
        low: a.applied_low_pa,
        high: a.applied_high_pa,
    });
    let verdict = outcome.stress.map(|s| match &measured {
        Some(m) => verdict::judge(m, s, strength_lower_bound).map_err(|e| e.to_string()),
        None => Err("no measured stress yet (see the results)".to_string()),
    });
    let chart = match (outcome.stress, analysis) {
        (None, _) => Err("needs a stress".to_string()),
        (Some(_), None) => Err("needs the measured stress".to_string()),
        (Some(s), Some(a)) => k_chart(s, a),
    };
    Check {
        kind,
        summary,
        outcome,
        verdict,
        measured,
        chart,
    }
}

fn k_chart(stress: f64, a: &Analysis) -> Result<KChart, String> {
    let Some(fl) = &a.flaw else {
        return Err("needs a toughness K_Ic for the material".to_string());
    };
    let net = stress + a.residual.at_origin_pa;
    if !net.is_finite() || net <= 0.0 {
        return Err(
            "the hypothesis does not overcome the surface compression at the origin".into(),
        );
    }
    let y = fl.factor.y;
    let k_ic = fl.toughness.value;
    let ac = critical::critical_size(net, k_ic, y).map_err(|e| e.to_string())?;
    // wide enough to show the predicted and the measured flaw, at least a decade each side
    let mut span: f64 = 10.0;
    for m in std::iter::once(fl.size_m).chain(fl.measured_m) {
        if m > 0.0 && m.is_finite() {
            span = span.max(2.0 * (m / ac).max(ac / m));
        }
    }
    let span = span.min(1e6);
    let curve = critical::curve(net, k_ic, y, span, 80).map_err(|e| e.to_string())?;
    let measured_curve = curve
        .points
        .iter()
        .map(|p| critical::CurvePoint {
            flaw_size: p.flaw_size,
            stress_intensity: critical::stress_intensity(a.stress_pa, p.flaw_size, y),
        })
        .collect();
    Ok(KChart {
        y,
        k_ic,
        hypothesis_net_pa: net,
        curve,
        measured_curve,
        predicted_flaw_m: fl.size_m,
        measured_flaw_m: fl.measured_m,
    })
}
