//! The materials screen: the library (read-only) and the bench's own materials, one list;
//! the highlighted material's constants below it; a form to add an own material (blank, or a
//! copy of the highlighted one) or to change an own one. A constant is typed as its value
//! with its unit, and optionally `± spread` (one standard deviation), e.g.
//! `2.05 MPa√m ± 0.06 MPa√m`.

use super::field::{Field, FieldKind};
use super::form::Form;
use super::{Action, App, Screen};
use crate::store::{MaterialBook, OwnMaterial};
use shardlog_core::fracture::materials::{self, slot, Constant, Material, Provenance, CONSTANTS};

/// One row of the list: a library material or an own one.
#[derive(Debug, Clone, PartialEq)]
pub struct MaterialRow {
    pub material: Material,
    /// Set for an own material.
    pub own: Option<OwnMaterial>,
}

/// What the form is for.
#[derive(Debug, Clone, PartialEq)]
pub enum FormPurpose {
    /// A new own material, copied from `base` (a library key) when set.
    Add {
        base: Option<String>,
        from: Material,
    },
    /// The next revision of an own material.
    Edit(OwnMaterial),
}

pub struct MaterialForm {
    pub purpose: FormPurpose,
    pub form: Form,
}

#[derive(Default)]
pub struct MaterialsState {
    pub rows: Vec<MaterialRow>,
    pub cursor: usize,
    pub form: Option<MaterialForm>,
}

/// The form's keys for the constants, in [`CONSTANTS`] order.
pub const CONSTANT_KEYS: [&str; 8] = ["a_i", "a_o", "a_b", "k_ic", "e", "nu", "alpha", "rho"];

fn field_label(i: usize) -> &'static str {
    [
        "A_i mirror–mist",
        "A_o mist–hackle",
        "A_b branching",
        "K_Ic toughness",
        "E modulus",
        "ν Poisson",
        "α expansion",
        "ρ density",
    ][i]
}

/// A constant as the form shows it: value with unit, and `± spread` when known.
fn typed_constant(i: usize, c: &Option<Constant>) -> String {
    let q = CONSTANTS[i].2;
    match c {
        Some(c) => match c.spread {
            Some(s) => format!("{} ± {}", q.typed(c.value), q.typed(s)),
            None => q.typed(c.value),
        },
        None => String::new(),
    }
}

fn blank_material() -> Material {
    Material {
        key: String::new(),
        name: String::new(),
        glass: true,
        a_i: None,
        a_o: None,
        a_b: None,
        k_ic: None,
        youngs_modulus: None,
        poisson: None,
        expansion: None,
        density: None,
        notes: String::new(),
    }
}

fn build_form(m: &Material, with_code: bool) -> Form {
    let mut form = Form::default();
    if with_code {
        form.push_field(
            Field::new("code", "Code", FieldKind::Text { required: true })
                .with_hint("kept for good: a-z, 0-9, _ (e.g. lab_float_2026)"),
        );
    }
    let mut name = Field::new("name", "Name", FieldKind::Text { required: true });
    name.set_text(&m.name);
    form.push_field(name);
    let mut copy = m.clone();
    for (i, key) in CONSTANT_KEYS.iter().enumerate() {
        let mut f = Field::new(key, field_label(i), FieldKind::Text { required: false })
            .with_hint("value with unit, ± spread; empty: none");
        f.set_text(&typed_constant(i, slot(&mut copy, i)));
        form.push_field(f);
    }
    form.mark_clean();
    form
}

/// Read the form into a material: every constant that changed is read with its unit and
/// marked as typed by `actor`; unchanged ones keep their value and provenance. The first
/// refusal names the field.
fn read_form(form: &Form, before: &Material, note: &str) -> Result<Material, String> {
    let mut m = before.clone();
    m.name = form.text("name");
    let mut old = before.clone();
    for (i, key) in CONSTANT_KEYS.iter().enumerate() {
        let text = form.text(key);
        if text == typed_constant(i, slot(&mut old, i)) {
            continue;
        }
        let q = CONSTANTS[i].2;
        let label = field_label(i);
        let c = slot(&mut m, i);
        if text.is_empty() {
            *c = None;
            continue;
        }
        let (value, spread) = match text.split_once('±').or_else(|| text.split_once("+-")) {
            Some((v, s)) => (v.trim(), Some(s.trim())),
            None => (text.as_str(), None),
        };
        let value = q.parse(value).map_err(|e| format!("{label}: {e}"))?;
        let spread = spread
            .map(|s| q.parse_spread(s))
            .transpose()
            .map_err(|e| format!("{label} spread: {e}"))?;
        *c = Some(Constant {
            value,
            spread,
            provenance: Provenance::User {
                note: note.to_string(),
            },
        });
    }
    Ok(m)
}

impl MaterialsState {
    /// The rows from the library and `book`'s own materials; the cursor stays in range.
    pub fn load(&mut self, book: &MaterialBook) {
        self.rows = materials::library()
            .into_iter()
            .map(|m| MaterialRow {
                material: m,
                own: None,
            })
            .chain(book.own_materials().iter().map(|o| MaterialRow {
                material: o.material.clone(),
                own: Some(o.clone()),
            }))
            .collect();
        self.cursor = self.cursor.min(self.rows.len().saturating_sub(1));
    }

    pub fn current(&self) -> Option<&MaterialRow> {
        self.rows.get(self.cursor)
    }

    pub fn is_dirty(&self) -> bool {
        self.form.as_ref().is_some_and(|f| f.form.is_dirty())
    }

    pub fn title(&self) -> String {
        match self.form.as_ref().map(|f| &f.purpose) {
            Some(FormPurpose::Add { base: Some(b), .. }) => {
                format!("New own material, copy of {b}")
            }
            Some(FormPurpose::Add { base: None, .. }) => "New own material".to_string(),
            Some(FormPurpose::Edit(o)) => {
                format!("Own material {} (revision {})", o.code, o.revision)
            }
            None => "Materials: library (read-only) and own".to_string(),
        }
    }
}

impl App {
    pub(super) fn open_materials(&mut self) {
        let book = match (self.store.as_ref(), self.fleet.as_ref()) {
            (Some(s), _) => s.material_book(),
            // the benches' own materials as they pushed them (read only here)
            (None, Some(f)) => f.material_book(),
            (None, None) => Ok(MaterialBook::library_only()),
        };
        let book = match book {
            Ok(b) => b,
            Err(e) => {
                self.error(e.to_string());
                return;
            }
        };
        self.materials.load(&book);
        self.materials.form = None;
        self.stack.push(Screen::Materials);
    }

    pub(super) fn update_materials(&mut self, action: Action) {
        if self.materials.form.is_some() {
            if action == Action::Save {
                self.save_material();
            } else if let Some(f) = self.materials.form.as_mut() {
                f.form.update(action);
            }
            return;
        }
        let n = self.materials.rows.len();
        let s = &mut self.materials;
        match action {
            Action::Up => s.cursor = s.cursor.saturating_sub(1),
            Action::Down => s.cursor = (s.cursor + 1).min(n.saturating_sub(1)),
            Action::Home => s.cursor = 0,
            Action::End => s.cursor = n.saturating_sub(1),
            Action::AddMaterial => self.start_material_form(false),
            Action::CopyMaterial => self.start_material_form(true),
            Action::Edit | Action::Confirm => self.start_material_edit(),
            _ => {}
        }
    }

    fn start_material_form(&mut self, copy: bool) {
        if self.store.is_none() {
            self.error("no database open: own materials are kept in the database");
            return;
        }
        let (base, from) = match (copy, self.materials.current()) {
            (true, Some(row)) => {
                let base = match &row.own {
                    Some(o) => o.base.clone(),
                    None => Some(row.material.key.clone()),
                };
                let mut m = row.material.clone();
                m.name = format!("{} (own copy)", m.name);
                (base, m)
            }
            _ => (None, blank_material()),
        };
        let mut form = build_form(&from, true);
        form.set_focus("code");
        self.materials.form = Some(MaterialForm {
            purpose: FormPurpose::Add { base, from },
            form,
        });
    }

    fn start_material_edit(&mut self) {
        let Some(row) = self.materials.current() else {
            return;
        };
        let Some(own) = row.own.clone() else {
            self.error(format!(
                "{} is a library material (read-only); c makes an own copy",
                row.material.key
            ));
            return;
        };
        let form = build_form(&own.material, false);
        self.materials.form = Some(MaterialForm {
            purpose: FormPurpose::Edit(own),
            form,
        });
    }

    fn save_material(&mut self) {
        let stamp = self.stamp();
        let note = format!("typed by {} on {}", stamp.actor, stamp.at.date_naive());
        let (Some(f), Some(store)) = (self.materials.form.as_ref(), self.store.as_mut()) else {
            return;
        };
        let result = match &f.purpose {
            FormPurpose::Add { base, from } => read_form(&f.form, from, &note).and_then(|m| {
                store
                    .add_own_material(&f.form.text("code"), base.as_deref(), &m, &stamp)
                    .map_err(|e| e.to_string())
            }),
            FormPurpose::Edit(own) => read_form(&f.form, &own.material, &note).and_then(|m| {
                store
                    .update_own_material(&own.code, Some(own.revision), &m, &stamp)
                    .map_err(|e| e.to_string())
            }),
        };
        match result {
            Ok(saved) => {
                let book = store.material_book();
                let lists = super::load_lists(store);
                self.materials.form = None;
                if let Some(book) = self.report(book) {
                    self.materials.load(&book);
                    if let Some(i) = self
                        .materials
                        .rows
                        .iter()
                        .position(|r| r.own.as_ref().is_some_and(|o| o.code == saved.code))
                    {
                        self.materials.cursor = i;
                    }
                    self.bench.set_materials(book);
                }
                if let Some(lists) = self.report(lists) {
                    self.lists = lists;
                }
                self.info(format!(
                    "saved own material {} (revision {})",
                    saved.code, saved.revision
                ));
            }
            Err(e) => self.error(e),
        }
    }
}
