//! Opening the bench calculator over an incident: the form is filled from the record, and
//! when an examination was saved from the bench, with everything the bench saved (temper,
//! origin, flaw geometry and a/c, measured compression and layer, own constants, the load
//! hypothesis and its inputs), so that the figures on screen are the saved ones.

use super::bench::BenchState;
use super::form::FormItem;
use crate::store::model::{Examination, Incident};
use shardlog_core::fracture::{AnalysisInput, Boundary, FlawGeometry, OriginLocation};
use shardlog_core::units::{format_exact, Unit};

impl BenchState {
    /// Fill the form from an incident: material, temper, thickness, origin location and the
    /// readings of its latest examination that has any; then what the bench saved with it.
    pub fn prefill(&mut self, inc: &Incident) {
        let ply = inc.glass.plies.first();
        let exam = inc
            .examinations
            .iter()
            .rev()
            .find(|e| !e.readings.is_empty());
        let material = exam
            .and_then(|e| e.material.clone())
            .or_else(|| ply.and_then(|p| p.material.clone()))
            .map(|m| m.replace('_', "-"));
        let found = material.and_then(|m| self.materials.find(&m));
        if let (Some(m), Some(p)) = (found, self.form.pick_mut("material")) {
            p.choose_code(&m.key);
        }
        if let (Some(t), Some(p)) = (
            ply.and_then(|p| p.temper.clone()),
            self.form.pick_mut("temper"),
        ) {
            p.choose_code(&t.replace('_', "-"));
        }
        if let Some(t) = ply.and_then(|p| p.thickness_m) {
            self.set_text("thickness", &format_exact(t, Unit::Millimetre));
        }
        // the viewing mode of the saved readings, when they share one
        if let Some(e) = exam {
            let first = e.readings.first().and_then(|r| r.viewing.clone());
            if first.is_some() && e.readings.iter().all(|r| r.viewing == first) {
                if let (Some(v), Some(p)) = (first, self.form.pick_mut("viewing")) {
                    p.choose_code(&v);
                }
            }
        }
        let location = inc
            .pattern
            .origin_location
            .as_deref()
            .and_then(|l| l.parse::<OriginLocation>().ok());
        if let (Some(l), Some(p)) = (location, self.form.pick_mut("origin")) {
            p.choose_code(l.code());
        }
        if let Some(e) = exam {
            for (code, key) in [
                ("mirror_mist", "r_mist"),
                ("mist_hackle", "r_hackle"),
                ("branching", "r_branch"),
            ] {
                let lines: Vec<String> = e
                    .readings
                    .iter()
                    .filter(|r| r.boundary == code)
                    .map(|r| r.radius.display())
                    .collect();
                self.set_text(key, &lines.join("\n"));
            }
            if let Some(d) = e.flaw.as_ref().and_then(|f| f.depth.as_ref()) {
                self.set_text("measured_flaw", &d.display());
            }
            self.restore_saved(e, location);
        }
        self.recompute();
    }

    fn set_text(&mut self, key: &str, text: &str) {
        if let Some(f) = self.form.field_mut(key) {
            f.set_text(text);
        }
    }

    fn choose(&mut self, key: &str, code: &str) {
        if let Some(p) = self.form.pick_mut(key) {
            p.choose_code(code);
        }
    }

    /// What the bench stored beside the analysis of `exam` (nothing when the examination was
    /// not saved from the bench).
    fn restore_saved(&mut self, exam: &Examination, location: Option<OriginLocation>) {
        let Some(result) = &exam.result else {
            return;
        };
        if let Some(input) = result
            .analysis
            .get("bench_input")
            .and_then(|v| serde_json::from_value::<AnalysisInput>(v.clone()).ok())
        {
            self.restore_input(&input, location);
        }
        self.restore_hypothesis(&result.analysis);
    }

    fn restore_input(&mut self, input: &AnalysisInput, location: Option<OriginLocation>) {
        if self.materials.own(&input.material.key).is_some() {
            self.saved_material = Some(input.material.clone());
        }
        self.choose("temper", input.temper.map(|t| t.key()).unwrap_or(""));
        if let Some(t) = input.thickness_m {
            self.set_text("thickness", &format_exact(t, Unit::Millimetre));
        }
        // the pattern's location when it agrees with the origin analysed, else the origin
        let origin = match location {
            Some(l) if l.origin() == input.origin => l,
            _ => input
                .origin
                .code()
                .parse::<OriginLocation>()
                .unwrap_or(OriginLocation::Surface),
        };
        self.choose("origin", origin.code());
        match input.flaw {
            Some(g) => {
                self.choose("geometry", g.kind().code());
                if let FlawGeometry::SemiElliptical { a_over_c, .. }
                | FlawGeometry::CornerCrack { a_over_c, .. } = g
                {
                    self.set_text("aspect", &a_over_c.to_string());
                }
            }
            // saved with the core's default for the origin: keep that geometry even when the
            // location would now imply another
            None => self.choose(
                "geometry",
                match input.origin {
                    shardlog_core::fracture::Origin::Interior => "penny",
                    shardlog_core::fracture::Origin::Surface => "semicircular",
                },
            ),
        }
        if let Some(s) = input.surface_compression_pa {
            self.set_text("surface_compression", &format_exact(s, Unit::Megapascal));
        }
        if let Some(d) = input.layer_depth_m {
            self.set_text("layer_depth", &format_exact(d, Unit::Millimetre));
        }
        for o in &input.constant_overrides {
            let key = match o.boundary {
                Boundary::MirrorMist => "a_i",
                Boundary::MistHackle => "a_o",
                Boundary::Branching => "a_b",
            };
            self.set_text(
                key,
                &format_exact(o.constant.value, Unit::MegapascalRootMetre),
            );
        }
        if let Some(k) = &input.toughness_override {
            self.set_text("k_ic", &format_exact(k.value, Unit::MegapascalRootMetre));
        }
    }

    /// The load hypothesis saved: its kind and the inputs as typed; a thermal one saved
    /// before the inputs were kept comes back from its ΔT and restraint.
    fn restore_hypothesis(&mut self, analysis: &serde_json::Value) {
        let load = analysis.get("load_hypothesis");
        let kind = load
            .and_then(|h| h.get("kind"))
            .and_then(|k| k.as_str())
            .filter(|k| super::hypothesis::KINDS.iter().any(|(c, _)| c == k));
        let mut typed: Vec<(&'static str, String)> = Vec::new();
        if let Some(fields) = load
            .and_then(|h| h.get("fields"))
            .and_then(|f| f.as_object())
        {
            for key in super::hypothesis::INPUT_KEYS {
                if let Some(text) = fields.get(*key).and_then(|t| t.as_str()) {
                    typed.push((*key, text.to_string()));
                }
            }
        } else if let Some(t) = analysis.get("thermal_hypothesis") {
            if let Some(dt) = t.get("delta_t_k").and_then(|v| v.as_f64()) {
                typed.push(("delta_t", format_exact(dt, Unit::Kelvin)));
            }
            if let Some(k) = t.get("restraint").and_then(|v| v.as_f64()) {
                typed.push(("h_restraint", k.to_string()));
            }
        }
        if typed.is_empty() {
            return;
        }
        let kind = kind.unwrap_or("thermal");
        self.choose("hypothesis", kind);
        self.hypothesis_stash.clear();
        super::hypothesis::swap_inputs(&mut self.form, kind, &mut self.hypothesis_stash);
        self.hypothesis_stash.clear();
        self.hypothesis_kind = kind.to_string();
        for (key, text) in typed {
            match self.form.items.iter_mut().find(|i| i.key() == key) {
                Some(FormItem::Field(f)) => f.set_text(&text),
                Some(FormItem::Pick(p)) if !text.is_empty() => p.choose_code(&text),
                _ => {}
            }
        }
    }

    /// The hypothesis inputs as typed, by key (what the bench saves to restore them).
    pub fn hypothesis_fields(&self) -> Vec<(String, String)> {
        self.form
            .items
            .iter()
            .filter(|i| super::hypothesis::INPUT_KEYS.contains(&i.key()))
            .map(|i| match i {
                FormItem::Field(f) => (f.key.to_string(), f.text()),
                FormItem::Pick(p) => (p.key.to_string(), p.chosen_code().unwrap_or("").to_string()),
            })
            .collect()
    }
}

impl BenchState {
    /// Offer the viewing modes of the database (in use; a retired one the bench holds stays
    /// chosen). Nothing changes when the list already holds them.
    pub fn set_viewing_modes(&mut self, lists: &crate::app::incident::Lists) {
        let mut items = vec![crate::app::picklist::PickItem::new("", "not recorded")];
        items.extend(lists.lookup(crate::store::model::LookupKind::ViewingMode));
        if let Some(p) = self.form.pick_mut("viewing") {
            if p.items() != items.as_slice() {
                p.set_items(items);
            }
        }
    }
}
