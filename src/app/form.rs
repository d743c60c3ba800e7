//! A form: an ordered list of text fields and pick-lists with one focus.

use super::field::Field;
use super::key::{Key, KeyPress};
use super::picklist::PickList;
use super::{Action, Ctx};

#[derive(Debug)]
#[allow(clippy::large_enum_variant)] // a handful per form; boxing buys nothing
pub enum FormItem {
    Field(Field),
    Pick(PickList),
}

impl FormItem {
    pub fn key(&self) -> &'static str {
        match self {
            FormItem::Field(f) => f.key,
            FormItem::Pick(p) => p.key,
        }
    }
    pub fn label(&self) -> &'static str {
        match self {
            FormItem::Field(f) => f.label,
            FormItem::Pick(p) => p.label,
        }
    }
    pub fn error(&self) -> Option<&str> {
        match self {
            FormItem::Field(f) => f.error(),
            FormItem::Pick(p) => p.error(),
        }
    }
    pub fn is_dirty(&self) -> bool {
        match self {
            FormItem::Field(f) => f.is_dirty(),
            FormItem::Pick(p) => p.is_dirty(),
        }
    }
}

#[derive(Debug, Default)]
pub struct Form {
    pub items: Vec<FormItem>,
    pub focus: usize,
}

/// What an action did to a form.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FormEvent {
    /// Nothing changed.
    None,
    /// Focus moved.
    Moved,
    /// A value changed (recompute what depends on it).
    Changed,
}

impl Form {
    pub fn new(items: Vec<FormItem>) -> Self {
        Form { items, focus: 0 }
    }

    pub fn push_field(&mut self, f: Field) {
        self.items.push(FormItem::Field(f));
    }

    pub fn push_pick(&mut self, p: PickList) {
        self.items.push(FormItem::Pick(p));
    }

    pub fn ctx(&self) -> Ctx {
        match self.items.get(self.focus) {
            Some(FormItem::Field(f)) if f.multi_line() => Ctx::MultiField,
            Some(FormItem::Field(_)) => Ctx::Field,
            Some(FormItem::Pick(_)) => Ctx::Pick,
            None => Ctx::Global,
        }
    }

    pub fn field(&self, key: &str) -> Option<&Field> {
        self.items.iter().find_map(|i| match i {
            FormItem::Field(f) if f.key == key => Some(f),
            _ => None,
        })
    }

    pub fn field_mut(&mut self, key: &str) -> Option<&mut Field> {
        self.items.iter_mut().find_map(|i| match i {
            FormItem::Field(f) if f.key == key => Some(f),
            _ => None,
        })
    }

    pub fn pick(&self, key: &str) -> Option<&PickList> {
        self.items.iter().find_map(|i| match i {
            FormItem::Pick(p) if p.key == key => Some(p),
            _ => None,
        })
    }

    pub fn pick_mut(&mut self, key: &str) -> Option<&mut PickList> {
        self.items.iter_mut().find_map(|i| match i {
            FormItem::Pick(p) if p.key == key => Some(p),
            _ => None,
        })
    }

    /// Text of a field, or code of a pick-list; empty when absent.
    pub fn text(&self, key: &str) -> String {
        if let Some(f) = self.field(key) {
            return f.text().trim().to_string();
        }
        self.pick(key)
            .and_then(|p| p.chosen_code())
            .unwrap_or("")
            .to_string()
    }

    pub fn focus_key(&self) -> Option<&'static str> {
        self.items.get(self.focus).map(FormItem::key)
    }

    pub fn set_focus(&mut self, key: &str) {
        if let Some(i) = self.items.iter().position(|it| it.key() == key) {
            self.focus = i;
        }
    }

    pub fn is_dirty(&self) -> bool {
        self.items.iter().any(FormItem::is_dirty)
    }

    pub fn mark_clean(&mut self) {
        for it in &mut self.items {
            match it {
                FormItem::Field(f) => f.mark_clean(),
                FormItem::Pick(p) => p.mark_clean(),
            }
        }
    }

    /// The first refusal, with the field's label.
    pub fn first_error(&self) -> Option<(usize, String)> {
        self.items
            .iter()
            .enumerate()
            .find_map(|(i, it)| it.error().map(|e| (i, format!("{}: {e}", it.label()))))
    }

    pub fn next(&mut self) {
        if !self.items.is_empty() {
            self.focus = (self.focus + 1) % self.items.len();
        }
    }

    pub fn prev(&mut self) {
        if !self.items.is_empty() {
            self.focus = (self.focus + self.items.len() - 1) % self.items.len();
        }
    }

    /// Leaving a pick-list with text typed into it takes the highlighted match (or, on an
    /// open-ended list, the typed text as a new entry), as Enter would: Tab never throws away
    /// what the user typed.
    fn take_typed_pick(&mut self) -> bool {
        match self.items.get_mut(self.focus) {
            Some(FormItem::Pick(p)) if !p.filter().trim().is_empty() => p.confirm(),
            _ => false,
        }
    }

    /// Apply a navigation or typing action to the focused item.
    pub fn update(&mut self, action: Action) -> FormEvent {
        match action {
            Action::NextField => {
                let changed = self.take_typed_pick();
                self.next();
                moved_or_changed(changed)
            }
            Action::PrevField => {
                let changed = self.take_typed_pick();
                self.prev();
                moved_or_changed(changed)
            }
            Action::Up => match self.items.get_mut(self.focus) {
                Some(FormItem::Pick(p)) => {
                    p.up();
                    FormEvent::Moved
                }
                _ => {
                    self.prev();
                    FormEvent::Moved
                }
            },
            Action::Down => match self.items.get_mut(self.focus) {
                Some(FormItem::Pick(p)) => {
                    p.down();
                    FormEvent::Moved
                }
                _ => {
                    self.next();
                    FormEvent::Moved
                }
            },
            Action::Confirm => match self.items.get_mut(self.focus) {
                Some(FormItem::Pick(p)) => {
                    let changed = p.confirm();
                    self.next();
                    if changed {
                        FormEvent::Changed
                    } else {
                        FormEvent::Moved
                    }
                }
                Some(FormItem::Field(f)) if f.multi_line() => {
                    f.input(KeyPress::plain(Key::Enter));
                    FormEvent::Changed
                }
                _ => {
                    self.next();
                    FormEvent::Moved
                }
            },
            Action::Input(input) => match self.items.get_mut(self.focus) {
                Some(FormItem::Field(f)) => {
                    if f.input(input) {
                        FormEvent::Changed
                    } else {
                        FormEvent::None
                    }
                }
                Some(FormItem::Pick(p)) => {
                    p.input(input);
                    FormEvent::Moved
                }
                None => FormEvent::None,
            },
            Action::Paste(text) => match self.items.get_mut(self.focus) {
                Some(FormItem::Field(f)) => {
                    f.paste(&text);
                    FormEvent::Changed
                }
                Some(FormItem::Pick(p)) => {
                    for c in text.chars() {
                        p.input(KeyPress::char(c));
                    }
                    FormEvent::Moved
                }
                None => FormEvent::None,
            },
            _ => FormEvent::None,
        }
    }
}

fn moved_or_changed(changed: bool) -> FormEvent {
    if changed {
        FormEvent::Changed
    } else {
        FormEvent::Moved
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::app::picklist::{PickItem, PickList};

    fn typed(form: &mut Form, text: &str) {
        for c in text.chars() {
            form.update(Action::Input(KeyPress::char(c)));
        }
    }

    #[test]
    fn tab_out_of_a_pick_list_keeps_the_typed_choice() {
        let assets = PickList::new(
            "asset",
            "Asset",
            vec![
                PickItem::new("car 213", "car 213"),
                PickItem::new("car 214", "car 214"),
            ],
        )
        .open_ended();
        let site = PickList::new("site", "Site", vec![PickItem::new("DEP", "depot")]);
        let mut form = Form::new(vec![FormItem::Pick(assets), FormItem::Pick(site)]);
        typed(&mut form, "214");
        assert_eq!(form.update(Action::NextField), FormEvent::Changed);
        assert_eq!(
            form.pick("asset").and_then(|p| p.chosen_code()),
            Some("car 214")
        );
        // a code nobody has yet is taken as new on an open-ended list
        form.update(Action::PrevField);
        typed(&mut form, "car 999");
        form.update(Action::NextField);
        assert_eq!(
            form.pick("asset").and_then(|p| p.chosen_code()),
            Some("car 999")
        );
        // Tab with nothing typed changes nothing
        assert_eq!(form.update(Action::NextField), FormEvent::Moved);
        assert_eq!(form.pick("site").and_then(|p| p.chosen_code()), None);
    }
}
