//! The bench calculator: mirror readings in, stress and flaw size out, live.

use super::field::{Field, FieldKind};
use super::form::{Form, FormEvent};
use super::picklist::PickList;
use super::{Action, Ctx};
use crate::units::Dimension;

pub struct BenchState {
    pub form: Form,
}

impl std::fmt::Debug for BenchState {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("BenchState").finish_non_exhaustive()
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
    .with_hint("one reading per line, e.g. 1.02 mm")
}

impl BenchState {
    pub fn new() -> Self {
        let mut form = Form::default();
        form.push_pick(PickList::new("material", "Material", Vec::new()).required());
        form.push_field(readings("r_mist", "Mirror–mist radii"));
        form.push_field(readings("r_hackle", "Mist–hackle radii"));
        form.push_field(readings("r_branch", "Branching distances"));
        BenchState { form }
    }

    pub fn ctx(&self) -> Ctx {
        self.form.ctx()
    }

    pub fn update(&mut self, action: Action) {
        if self.form.update(action) == FormEvent::Changed {
            self.recompute();
        }
    }

    pub fn recompute(&mut self) {}
}

impl Default for BenchState {
    fn default() -> Self {
        Self::new()
    }
}
