//! The bench calculator: mirror readings in, stress and flaw size out, live.
//!
//! Every edit rebuilds an [`AnalysisInput`] from the form and calls
//! [`shardlog_core::fracture::analyze`] (the same call the command line and reports make), so the
//! figures on screen are the core's figures. Flaw sizes for the other geometries come from
//! that one analysis ([`Analysis::flaw_size_for`]), not from a run per geometry.

use super::field::{Field, FieldKind, FieldValue};
use super::form::{Form, FormEvent};
use super::picklist::{PickItem, PickList};
use super::{Action, Ctx};
use crate::store::MaterialBook;
use shardlog_core::fracture::{
    self, materials, Analysis, AnalysisInput, Boundary, BoundaryReadings, Constant,
    ConstantOverride, FlawGeometry, FlawKind, OriginLocation, Temper,
};
use shardlog_core::units::Dimension;

/// Flaw size under one geometry, for the per-geometry table.
#[derive(Debug, Clone, PartialEq)]
pub struct GeometryRow {
    pub label: String,
    pub y: f64,
    pub size_m: f64,
    pub low_m: f64,
    pub high_m: f64,
}

/// The thermal hypothesis tried beside the measurement: σ = k·E·α·ΔT (loads::thermal) and
/// the verdict against the applied stress (loads::verdict).
#[derive(Debug, Clone, PartialEq)]
pub struct ThermalCheck {
    pub delta_t_k: f64,
    pub restraint: f64,
    pub stress_pa: f64,
    pub stress_per_kelvin: f64,
    pub verdict: Result<shardlog_core::loads::verdict::Verdict, String>,
    pub warnings: Vec<String>,
}

/// What the calculator shows.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Nothing typed yet.
    Waiting,
    /// The form cannot be used yet: the first refusal, naming the field.
    Incomplete(String),
    /// The core refused the input.
    Refused(String),
    Done {
        input: Box<AnalysisInput>,
        analysis: Box<Analysis>,
        per_geometry: Vec<GeometryRow>,
    },
}

pub struct BenchState {
    pub form: Form,
    pub outcome: Outcome,
    /// The thermal hypothesis, when a ΔT is typed (or why it cannot be evaluated).
    pub thermal: Option<Result<ThermalCheck, String>>,
    /// The load hypothesis of any kind (thermal included), when its inputs are typed.
    pub hypothesis: Option<Result<super::hypothesis::Check, String>>,
    /// The kind whose inputs are in the form.
    pub hypothesis_kind: String,
    /// Text typed for the kinds not shown, kept for when they are picked again.
    pub hypothesis_stash: std::collections::HashMap<&'static str, String>,
    /// First line of the results pane shown (PgUp/PgDn, mouse wheel).
    pub scroll: u16,
    /// The largest useful `scroll`, as the last frame measured it (the view sets it; the
    /// state only uses it to keep scrolling in range).
    pub scroll_max: std::cell::Cell<u16>,
    /// The materials the pick-list offers: the library, then the database's own.
    pub materials: MaterialBook,
    /// The constants a reopened examination was saved with, when it used an own material:
    /// used while that material stays picked, so the figures are the saved ones even after
    /// the material was changed.
    pub saved_material: Option<materials::Material>,
}

/// The material pick-list's items: the library, then the own materials marked "own".
fn material_items(book: &MaterialBook) -> Vec<PickItem> {
    materials::library()
        .into_iter()
        .map(|m| PickItem::new(m.key.clone(), format!("{} ({})", m.name, m.key)))
        .chain(book.own_materials().iter().map(|o| {
            PickItem::new(
                o.code.clone(),
                format!("{} ({}, own)", o.material.name, o.code),
            )
        }))
        .collect()
}

impl std::fmt::Debug for BenchState {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("BenchState")
            .field("outcome", &self.outcome)
            .finish_non_exhaustive()
    }
}

fn readings(key: &'static str, label: &'static str) -> Field {
    Field::new(
        key,
        label,
        FieldKind::Readings {
            dim: Dimension::Length,
        },
    )
    .with_hint("one per line, e.g. 1.02 mm")
}

fn optional_length(key: &'static str, label: &'static str, hint: &'static str) -> Field {
    Field::new(
        key,
        label,
        FieldKind::Quantity {
            dim: Dimension::Length,
            positive: true,
            optional: true,
        },
    )
    .with_hint(hint)
}

fn optional_toughness(key: &'static str, label: &'static str) -> Field {
    Field::new(
        key,
        label,
        FieldKind::Quantity {
            dim: Dimension::Toughness,
            positive: true,
            optional: true,
        },
    )
    .with_hint("library value")
}

/// The geometries of the per-geometry table (a/t from the thickness where one is given).
pub fn table_geometries(aspect: f64) -> Vec<FlawGeometry> {
    vec![
        FlawGeometry::Semicircular { a_over_t: 0.0 },
        FlawGeometry::SemiElliptical {
            a_over_c: aspect,
            a_over_t: 0.0,
        },
        FlawGeometry::EmbeddedPenny,
        FlawGeometry::EdgeCrack,
        FlawGeometry::CornerCrack {
            a_over_c: aspect.min(1.0),
            a_over_t: 0.0,
        },
        FlawGeometry::ThroughCrack,
    ]
}

/// Default a/c for the elliptical cases when none is typed.
pub const DEFAULT_ASPECT: f64 = 0.8;

impl BenchState {
    pub fn new() -> Self {
        let mats = material_items(&MaterialBook::library_only());
        let mut form = Form::default();
        form.push_pick(
            PickList::new("material", "Material", mats)
                .required()
                .with_choice("soda-lime"),
        );
        form.push_field(readings("r_mist", "Mirror–mist R"));
        form.push_field(readings("r_hackle", "Mist–hackle R"));
        form.push_field(readings("r_branch", "Branching R"));
        // the modes are the database's lookup list (set when the bench opens over one)
        form.push_pick(PickList::new(
            "viewing",
            "Viewing",
            vec![PickItem::new("", "not recorded")],
        ));
        form.push_pick(
            PickList::new(
                "temper",
                "Temper class",
                vec![
                    PickItem::new("", "not stated"),
                    PickItem::new("annealed", "annealed"),
                    PickItem::new("heat-strengthened", "heat-strengthened"),
                    PickItem::new("fully-tempered", "fully tempered"),
                    PickItem::new("chemically-strengthened", "chemically strengthened"),
                ],
            )
            .with_choice(""),
        );
        form.push_field(optional_length("thickness", "Thickness", "e.g. 6 mm"));
        form.push_pick(
            PickList::new(
                "origin",
                "Origin",
                OriginLocation::ALL
                    .iter()
                    .map(|l| PickItem::new(l.code(), origin_label(*l)))
                    .collect(),
            )
            .with_choice("surface"),
        );
        form.push_pick(super::hypothesis::kind_pick());
        for item in super::hypothesis::inputs("thermal") {
            form.items.push(item);
        }
        form.push_pick(
            PickList::new(
                "geometry",
                "Flaw geometry",
                vec![
                    PickItem::new("", "default for the origin"),
                    PickItem::new("semicircular", "semicircular surface flaw"),
                    PickItem::new("semi-elliptical", "semi-elliptical surface flaw"),
                    PickItem::new("penny", "embedded penny crack"),
                    PickItem::new("edge", "edge crack"),
                    PickItem::new("corner", "corner crack"),
                    PickItem::new("through", "through crack"),
                ],
            )
            .with_choice(""),
        );
        form.push_field(
            Field::new("aspect", "Flaw a/c", FieldKind::Number { optional: true })
                .with_hint("0.8 (elliptical, corner)"),
        );
        form.push_field(optional_length(
            "measured_flaw",
            "Measured flaw",
            "depth if seen, e.g. 90 µm",
        ));
        form.push_field(
            Field::new(
                "surface_compression",
                "Surface compr.",
                FieldKind::Quantity {
                    dim: Dimension::Stress,
                    positive: false,
                    optional: true,
                },
            )
            .with_hint("measured, e.g. 95 MPa"),
        );
        form.push_field(optional_length(
            "layer_depth",
            "Layer depth",
            "chemical: e.g. 40 µm",
        ));

        form.push_field(optional_toughness("a_i", "A_i (own)"));
        form.push_field(optional_toughness("a_o", "A_o (own)"));
        form.push_field(optional_toughness("a_b", "A_b (own)"));
        form.push_field(optional_toughness("k_ic", "K_Ic (own)"));
        form.mark_clean();
        let mut b = BenchState {
            form,
            outcome: Outcome::Waiting,
            thermal: None,
            hypothesis: None,
            hypothesis_kind: "thermal".to_string(),
            hypothesis_stash: std::collections::HashMap::new(),
            scroll: 0,
            scroll_max: std::cell::Cell::new(u16::MAX),
            materials: MaterialBook::library_only(),
            saved_material: None,
        };
        b.recompute();
        b
    }

    /// A fresh calculator offering the library and these own materials.
    pub fn with_materials(book: MaterialBook) -> Self {
        let mut b = BenchState::new();
        b.set_materials(book);
        b
    }

    /// Offer the library and these own materials (the choice stays when it is still
    /// offered), and recompute.
    pub fn set_materials(&mut self, book: MaterialBook) {
        if let Some(p) = self.form.pick_mut("material") {
            p.set_items(material_items(&book));
        }
        self.materials = book;
        self.recompute();
    }

    /// The material picked, from the library or the own materials.
    pub fn material(&self) -> Option<materials::Material> {
        let picked = self.form.text("material");
        match &self.saved_material {
            Some(m) if m.key == picked => Some(m.clone()),
            _ => self.materials.find(&picked),
        }
    }

    pub fn ctx(&self) -> Ctx {
        self.form.ctx()
    }

    pub fn update(&mut self, action: Action) {
        match action {
            Action::PageDown | Action::ScrollDown => {
                let step = if action == Action::PageDown { 8 } else { 2 };
                self.scroll = self.scroll.saturating_add(step).min(self.scroll_max.get());
            }
            Action::PageUp | Action::ScrollUp => {
                let step = if action == Action::PageUp { 8 } else { 2 };
                self.scroll = self.scroll.saturating_sub(step);
            }
            Action::JumpHypothesis => {
                if self.form.focus_key().is_some_and(|k| {
                    k == "hypothesis" || super::hypothesis::INPUT_KEYS.contains(&k)
                }) {
                    self.form.set_focus("r_mist");
                } else {
                    self.form.set_focus("hypothesis");
                }
            }
            other => {
                let ev = self.form.update(other);
                if ev == FormEvent::Changed {
                    let kind = self.form.text("hypothesis");
                    if !kind.is_empty() && kind != self.hypothesis_kind {
                        // an impulse force carries over as the patch load, unless one is typed
                        if let (Some(Ok(c)), "plate-patch") = (&self.hypothesis, kind.as_str()) {
                            let typed = self
                                .hypothesis_stash
                                .get("h_force")
                                .is_some_and(|t| !t.trim().is_empty());
                            if let (Some(force), false, "impulse") =
                                (c.outcome.force, typed, c.kind)
                            {
                                self.hypothesis_stash.insert(
                                    "h_force",
                                    shardlog_core::units::format_sig(
                                        force,
                                        shardlog_core::units::Unit::Newton,
                                        4,
                                    ),
                                );
                            }
                        }
                        super::hypothesis::swap_inputs(
                            &mut self.form,
                            &kind,
                            &mut self.hypothesis_stash,
                        );
                        self.hypothesis_kind = kind;
                    }
                    self.recompute();
                }
            }
        }
    }

    /// Rebuild the input from the form and run the core.
    pub fn recompute(&mut self) {
        self.outcome = match self.input() {
            Ok(None) => Outcome::Waiting,
            Ok(Some(input)) => match fracture::analyze(&input) {
                Ok(analysis) => {
                    let per_geometry = per_geometry(&input, &analysis, self.aspect());
                    Outcome::Done {
                        input: Box::new(input),
                        analysis: Box::new(analysis),
                        per_geometry,
                    }
                }
                Err(e) => Outcome::Refused(e.to_string()),
            },
            Err(e) => Outcome::Incomplete(e),
        };
        self.thermal = self.thermal_check();
        let analysis = match &self.outcome {
            Outcome::Done { analysis, .. } => Some(analysis.as_ref()),
            _ => None,
        };
        let material = self.material();
        self.hypothesis = super::hypothesis::check(&self.form, analysis, material.as_ref());
    }

    /// Thermal edge stress for the typed ΔT with the material's E and α (restraint k as typed,
    /// 1 when empty: a fully restrained edge strip), judged against the applied stress.
    fn thermal_check(&self) -> Option<Result<ThermalCheck, String>> {
        let dt = match self.opt_quantity("delta_t") {
            Ok(Some(dt)) => dt,
            Ok(None) => return None,
            Err(e) => return Some(Err(e)),
        };
        let material = self.material()?;
        let (Some(e), Some(a)) = (&material.youngs_modulus, &material.expansion) else {
            return Some(Err(format!(
                "{} has no Young's modulus or expansion coefficient among its constants",
                material.name
            )));
        };
        let restraint = match self.form.field("h_restraint").map(|f| f.value()) {
            Some(Ok(FieldValue::Number(k))) => k,
            Some(Err(e)) => return Some(Err(e)),
            _ => 1.0,
        };
        let input = shardlog_core::loads::thermal::Thermal {
            youngs_modulus: e.value,
            expansion: a.value,
            delta_t: dt,
            restraint,
        };
        let r = match shardlog_core::loads::thermal::edge_stress(&input) {
            Ok(r) => r,
            Err(e) => return Some(Err(e.to_string())),
        };
        let verdict = match &self.outcome {
            Outcome::Done { analysis, .. } => shardlog_core::loads::verdict::judge(
                &shardlog_core::loads::verdict::Measured {
                    stress: analysis.applied_stress_pa,
                    low: analysis.applied_low_pa,
                    high: analysis.applied_high_pa,
                },
                r.stress,
                None,
            )
            .map_err(|e| e.to_string()),
            _ => Err("no measured stress yet".to_string()),
        };
        Some(Ok(ThermalCheck {
            delta_t_k: dt,
            restraint,
            stress_pa: r.stress,
            stress_per_kelvin: r.stress_per_kelvin,
            verdict,
            warnings: r.warnings.iter().map(|w| w.message.clone()).collect(),
        }))
    }

    /// Where the origin sits, as picked (surface when nothing is picked).
    pub fn origin_location(&self) -> OriginLocation {
        self.form
            .text("origin")
            .parse::<OriginLocation>()
            .unwrap_or(OriginLocation::Surface)
    }

    fn aspect(&self) -> f64 {
        match self.form.field("aspect").map(|f| f.value()) {
            Some(Ok(FieldValue::Number(x))) if x > 0.0 && x <= 2.0 => x,
            _ => DEFAULT_ASPECT,
        }
    }

    fn opt_quantity(&self, key: &str) -> Result<Option<f64>, String> {
        match self.form.field(key).map(|f| f.value()) {
            Some(Ok(FieldValue::Quantity(q))) => Ok(Some(q)),
            Some(Ok(_)) | None => Ok(None),
            Some(Err(e)) => Err(e),
        }
    }

    /// The analysis input the form describes; `Ok(None)` when no reading is typed yet.
    pub fn input(&self) -> Result<Option<AnalysisInput>, String> {
        let material = self
            .material()
            .ok_or_else(|| "Material: pick one from the list".to_string())?;
        let mut input = AnalysisInput::new(material);
        for (k, boundary) in [
            ("r_mist", Boundary::MirrorMist),
            ("r_hackle", Boundary::MistHackle),
            ("r_branch", Boundary::Branching),
        ] {
            let Some(f) = self.form.field(k) else {
                continue;
            };
            match f.value()? {
                FieldValue::Readings(r) => input.readings.push(BoundaryReadings {
                    boundary,
                    radii_m: r,
                }),
                _ => continue,
            }
        }
        if input.readings.is_empty() {
            // show the refusals of the other fields even before the first reading
            if let Some((_, e)) = self.form.first_error() {
                return Err(e);
            }
            return Ok(None);
        }
        input.temper = self.form.text("temper").parse::<Temper>().ok();
        let location = self.origin_location();
        input.origin = location.origin();
        input.thickness_m = self.opt_quantity("thickness")?;
        input.measured_flaw_m = self.opt_quantity("measured_flaw")?;
        input.surface_compression_pa = self.opt_quantity("surface_compression")?;
        input.layer_depth_m = self.opt_quantity("layer_depth")?;
        if let Some(f) = self.form.field("aspect") {
            f.value()?;
        }
        let aspect = self.aspect();
        input.flaw = match self.form.text("geometry").parse::<FlawKind>() {
            Ok(FlawKind::Semicircular) => Some(FlawGeometry::Semicircular { a_over_t: 0.0 }),
            Ok(FlawKind::SemiElliptical) => Some(FlawGeometry::SemiElliptical {
                a_over_c: aspect,
                a_over_t: 0.0,
            }),
            Ok(FlawKind::EmbeddedPenny) => Some(FlawGeometry::EmbeddedPenny),
            Ok(FlawKind::EdgeCrack) => Some(FlawGeometry::EdgeCrack),
            Ok(FlawKind::CornerCrack) => Some(FlawGeometry::CornerCrack {
                a_over_c: aspect.min(1.0),
                a_over_t: 0.0,
            }),
            Ok(FlawKind::ThroughCrack) => Some(FlawGeometry::ThroughCrack),
            Ok(FlawKind::SemicircularHand) => None,
            Err(_) => default_geometry(location, aspect),
        };
        for (k, boundary) in [
            ("a_i", Boundary::MirrorMist),
            ("a_o", Boundary::MistHackle),
            ("a_b", Boundary::Branching),
        ] {
            if let Some(v) = self.opt_quantity(k)? {
                input.constant_overrides.push(ConstantOverride {
                    boundary,
                    constant: Constant::user(v, "typed at the bench"),
                });
            }
        }
        if let Some(v) = self.opt_quantity("k_ic")? {
            input.toughness_override = Some(Constant::user(v, "typed at the bench"));
        }
        Ok(Some(input))
    }
}

/// The origin pick-list's words for a location.
fn origin_label(location: OriginLocation) -> &'static str {
    match location {
        OriginLocation::Surface => "surface (semicircular flaw)",
        OriginLocation::Edge => "edge (edge crack)",
        OriginLocation::Corner => "corner (corner crack)",
        OriginLocation::Interior => "interior (tensile core, penny)",
    }
}

/// The flaw geometry an origin location implies when none is picked (the core's rule).
pub fn default_geometry(location: OriginLocation, aspect: f64) -> Option<FlawGeometry> {
    location.default_geometry(aspect)
}

/// Flaw size for each geometry of the table, from the one analysis already made.
fn per_geometry(input: &AnalysisInput, analysis: &Analysis, aspect: f64) -> Vec<GeometryRow> {
    table_geometries(aspect)
        .into_iter()
        .filter_map(|g| {
            let f = analysis.flaw_size_for(input, g)?;
            Some(GeometryRow {
                label: f.geometry_label,
                y: f.factor.y,
                size_m: f.size_m,
                low_m: f.size_low_m,
                high_m: f.size_high_m,
            })
        })
        .collect()
}

impl Default for BenchState {
    fn default() -> Self {
        Self::new()
    }
}
