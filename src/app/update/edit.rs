//! A form over an incident, a new one or the log's filters: typing and saving.

use std::path::{Path, PathBuf};

use crate::app::form::{self, Form};
use crate::app::incident::{self, EditKind};
use crate::app::picklist::PickItem;
use crate::app::{Action, App, Prompt};
use crate::store::model::Incident;
use crate::store::{Store, StoreError};

impl App {
    pub(super) fn update_edit(&mut self, action: Action) {
        if action == Action::Save {
            self.save_edit();
            return;
        }
        let Some(edit) = &mut self.edit else { return };
        if edit.kind == EditKind::BenchFilter && action == Action::Confirm {
            let bench = edit
                .form
                .pick("bench")
                .and_then(|p| p.highlighted().or(p.chosen_item()))
                .map(|i| i.code.clone());
            self.apply_bench_filter(bench.filter(|b| !b.is_empty()));
            return;
        }
        if edit.kind == EditKind::Filter && action == Action::Confirm {
            if let Some(form::FormItem::Field(_)) = edit.form.items.get(edit.form.focus) {
                self.apply_filter();
                return;
            }
        }
        let focus = edit.form.focus_key();
        if edit.form.update(action) == form::FormEvent::Changed {
            if let (Some(k @ ("supplier" | "product")), Some(store)) = (focus, self.store.as_ref())
            {
                narrow_glass_lists(&mut edit.form, store, k);
            }
        }
    }

    pub(super) fn save_edit(&mut self) {
        let Some(edit) = self.edit.as_ref() else {
            return;
        };
        if edit.kind == EditKind::Filter {
            self.apply_filter();
            return;
        }
        if edit.kind == EditKind::BenchFilter {
            let bench = edit
                .form
                .pick("bench")
                .and_then(|p| p.highlighted().or(p.chosen_item()))
                .map(|i| i.code.clone());
            self.apply_bench_filter(bench.filter(|b| !b.is_empty()));
            return;
        }
        if matches!(
            edit.kind,
            EditKind::LookupAdd(_) | EditKind::LookupRename(_)
        ) {
            self.save_lookup_edit();
            return;
        }
        if let Some((i, e)) = edit.form.first_error() {
            if let Some(edit) = self.edit.as_mut() {
                edit.form.focus = i;
            }
            self.error(format!("not saved: {e}"));
            return;
        }
        let stamp = self.stamp();
        let kind = edit.kind;
        let Some(store) = self.store.as_mut() else {
            self.error("no database is open");
            return;
        };
        let result: Result<Incident, String> = match kind {
            EditKind::New => {
                let mut draft = Incident::draft(stamp.at.date_naive());
                let confirmed = std::mem::take(&mut self.duplicate_confirmed);
                match incident::apply(kind, &edit.form, &mut draft) {
                    Err(e) => Err(e),
                    Ok(()) => {
                        let same = match store.possible_duplicates(&draft) {
                            Ok(same) => same,
                            Err(e) => {
                                self.error(format!("not saved: {e}"));
                                return;
                            }
                        };
                        if !same.is_empty() && !confirmed {
                            self.prompt = Some(Prompt::SaveDuplicate(same.join(", ")));
                            return;
                        }
                        store
                            .create_incident(&draft, &stamp)
                            .map_err(|e| e.to_string())
                    }
                }
            }
            EditKind::Section(_) => {
                let Some(base) = edit.base.clone() else {
                    return;
                };
                let mut inc = base;
                match incident::apply(kind, &edit.form, &mut inc) {
                    Ok(()) => match store.update_incident(&inc, &stamp) {
                        Ok(saved) => Ok(saved),
                        Err(StoreError::StaleRevision { reference, .. }) => {
                            // short enough for an 80-column status line
                            let msg = format!(
                                "not saved: {reference} was changed meanwhile; your input is kept"
                            );
                            if let Some(edit) = self.edit.as_mut() {
                                edit.conflict = true;
                            }
                            self.error(msg);
                            return;
                        }
                        Err(e) => Err(e.to_string()),
                    },
                    Err(e) => Err(e),
                }
            }
            EditKind::Custody => {
                let Some(base) = edit.base.as_ref() else {
                    return;
                };
                incident::custody_entry(&edit.form).and_then(|entry| {
                    store
                        .add_custody(&base.id, &entry, &stamp)
                        .map_err(|e| e.to_string())
                })
            }
            EditKind::Attach => {
                let Some(base) = edit.base.as_ref() else {
                    return;
                };
                let path = expand_home(&edit.form.text("path"), self.home.as_deref());
                let caption = edit.form.text("caption");
                store
                    .add_attachment(&base.id, &path, &caption, &stamp)
                    .map_err(|e| e.to_string())
            }
            EditKind::Exposure => {
                self.save_exposure();
                return;
            }
            _ => return,
        };
        match result {
            Ok(saved) => {
                let lot_note = self.save_lot_heat_soak(&saved);
                let what = match kind {
                    EditKind::New => format!("created {}", saved.reference),
                    EditKind::Section(s) => {
                        format!("saved {} of {}", s.title().to_lowercase(), saved.reference)
                    }
                    EditKind::Custody => format!("custody entry added to {}", saved.reference),
                    EditKind::Attach => {
                        let h = saved
                            .attachments
                            .last()
                            .map(|a| a.sha256.chars().take(16).collect::<String>())
                            .unwrap_or_default();
                        format!("attached to {} (sha256 {h}…)", saved.reference)
                    }
                    _ => String::new(),
                };
                self.edit = None;
                self.stack.pop();
                if kind == EditKind::New {
                    let id = saved.id.clone();
                    self.open_incident(&id);
                } else {
                    self.reopen_incident();
                }
                if let Some(store) = self.store.as_ref() {
                    let r = self.log.refresh(store);
                    self.report(r);
                }
                self.info(format!("{what}{lot_note}"));
            }
            Err(e) => self.error(format!("not saved: {e}")),
        }
    }
}

/// After a supplier (or product) is chosen, the product and lot lists keep only what belongs
/// to it (a new code keeps the full lists: it has nothing of its own yet).
fn narrow_glass_lists(form: &mut Form, store: &Store, changed: &str) {
    let supplier = form.text("supplier");
    let product = form.text("product");
    let sup = (!supplier.is_empty()).then_some(supplier.as_str());
    if changed == "supplier" {
        if let Ok(products) = store.products(sup) {
            if !products.is_empty() {
                let items = products
                    .into_iter()
                    .map(|p| PickItem::new(p.code.clone(), format!("{} ({})", p.name, p.code)))
                    .collect();
                if let Some(p) = form.pick_mut("product") {
                    p.set_items(items);
                }
            }
        }
    }
    let prod = (!product.is_empty()).then_some(product.as_str());
    if let Ok(lots) = store.lots(sup, prod) {
        if !lots.is_empty() {
            let items = lots
                .into_iter()
                .map(|l| PickItem::new(l.code.clone(), format!("{} · {}", l.code, l.product)))
                .collect();
            if let Some(p) = form.pick_mut("lot") {
                p.set_items(items);
            }
        }
    }
}

/// A typed path, with a leading `~/` read as the home folder when it is known.
fn expand_home(path: &str, home: Option<&Path>) -> PathBuf {
    let p = path.trim();
    match (p.strip_prefix("~/"), home) {
        (Some(rest), Some(home)) => home.join(rest),
        _ => PathBuf::from(p),
    }
}
