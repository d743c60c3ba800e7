//! The log screen: moving, sorting, searching, the filter form.

use crate::app::field::{self, Field, FieldKind};
use crate::app::form::Form;
use crate::app::incident::{EditKind, EditState};
use crate::app::picklist::{PickItem, PickList};
use crate::app::{Action, App, Screen};
use crate::store::model::LookupKind;

impl App {
    pub(super) fn update_log(&mut self, action: Action) {
        if let Some(search) = &mut self.search {
            match action {
                Action::Confirm => {
                    let t = search.text().trim().to_string();
                    self.search = None;
                    self.log.filter.text = if t.is_empty() { None } else { Some(t) };
                    self.reload_log();
                }
                Action::Back => {
                    self.search = None;
                    self.info("search cancelled");
                }
                Action::Input(i) => {
                    search.input(i);
                }
                Action::Paste(p) => search.paste(&p),
                _ => {}
            }
            return;
        }
        let Some(store) = crate::app::read_side(&self.store, &self.fleet) else {
            return;
        };
        let r = match action {
            Action::Down | Action::ScrollDown => self.log.down(store),
            Action::Up | Action::ScrollUp => self.log.up(store),
            Action::PageDown => self.log.pg_down(store),
            Action::PageUp => self.log.pg_up(store),
            Action::Home => self.log.home(store),
            Action::End => self.log.end(store),
            Action::SortNext => {
                self.log.next_sort();
                self.log.resort(store)
            }
            Action::SortReverse => {
                self.log.reverse_sort();
                self.log.resort(store)
            }
            Action::ClearFilter => {
                self.log.filter = Default::default();
                let r = self.log.reload(store);
                self.info("filters cleared");
                r
            }
            Action::Search => {
                let mut f = Field::new("search", "Search", FieldKind::Text { required: false })
                    .with_hint("words in reference, position, description, notes");
                if let Some(t) = &self.log.filter.text {
                    f.set_text(t);
                }
                self.search = Some(f);
                Ok(())
            }
            Action::Filter => {
                self.open_filter();
                Ok(())
            }
            Action::FilterBench => {
                self.open_bench_filter();
                Ok(())
            }
            Action::Confirm | Action::Right => {
                if let Some(row) = self.log.selected_row() {
                    let id = row.id.clone();
                    self.open_incident(&id);
                }
                Ok(())
            }
            Action::NewIncident => {
                self.open_new();
                Ok(())
            }
            Action::OpenBench => {
                self.bench_target = None;
                self.stack.push(Screen::Bench);
                Ok(())
            }
            Action::OpenReview => {
                self.open_review();
                Ok(())
            }
            Action::OpenMaterials => {
                self.open_materials();
                Ok(())
            }

            _ => Ok(()),
        };
        self.report(r);
    }

    pub(super) fn reload_log(&mut self) {
        if let Some(store) = crate::app::read_side(&self.store, &self.fleet) {
            let r = self.log.reload(store);
            self.report(r);
        }
    }

    /// The benches as pick items (the fleet's bench codes).
    fn bench_items(&self) -> Vec<PickItem> {
        self.lists
            .benches
            .iter()
            .map(|b| PickItem::new(b.clone(), b.clone()))
            .collect()
    }

    /// One pick of the fleet's benches; the log shows the chosen bench's incidents.
    pub(super) fn open_bench_filter(&mut self) {
        if !self.on_fleet() {
            self.info("B chooses a bench on the fleet database; a bench file holds its own");
            return;
        }
        let mut items = vec![PickItem::new("", "every bench")];
        items.extend(self.bench_items());
        let pick = PickList::new("bench", "Bench", items)
            .with_choice(self.log.filter.bench.as_deref().unwrap_or(""));
        let mut form = Form::default();
        form.push_pick(pick);
        form.mark_clean();
        self.edit = Some(EditState {
            kind: EditKind::BenchFilter,
            form,
            base: None,
            conflict: false,
        });
        self.stack.push(Screen::Edit);
    }

    pub(super) fn apply_bench_filter(&mut self, bench: Option<String>) {
        self.log.filter.bench = bench;
        self.edit = None;
        self.stack.pop();
        self.reload_log();
    }

    pub(super) fn open_filter(&mut self) {
        let benches = self.bench_items();
        let f = &self.log.filter;
        let mut form = Form::default();
        let any = |items: Vec<PickItem>| {
            let mut v = vec![PickItem::new("", "any")];
            v.extend(items);
            v
        };
        let pick = |key, label, items: Vec<PickItem>, cur: &Option<String>| {
            PickList::new(key, label, any(items)).with_choice(cur.as_deref().unwrap_or(""))
        };
        if self.on_fleet() {
            form.push_pick(pick("bench", "Bench", benches, &f.bench));
        }
        form.push_pick(pick(
            "status",
            "Status",
            self.lists.lookup_with_retired(LookupKind::Status),
            &f.status,
        ));
        let mut causes = self.lists.lookup_with_retired(LookupKind::CauseCategory);
        causes.push(PickItem::new(
            crate::store::model::NO_CAUSE,
            "no cause recorded yet",
        ));
        form.push_pick(pick("cause", "Cause", causes, &f.cause));
        form.push_pick(pick(
            "origin_type",
            "Origin type",
            self.lists.lookup_with_retired(LookupKind::OriginType),
            &f.origin_type,
        ));
        form.push_pick(pick(
            "supplier",
            "Supplier",
            self.lists.suppliers.clone(),
            &f.supplier,
        ));
        form.push_pick(pick("lot", "Lot", self.lists.lots.clone(), &f.lot));
        form.push_pick(pick("site", "Site", self.lists.sites.clone(), &f.site));
        form.push_field(
            Field::new("since", "Found since", FieldKind::Date { optional: true })
                .with_hint("YYYY-MM-DD")
                .with_text(&f.since.map(|d| d.to_string()).unwrap_or_default()),
        );
        form.push_field(
            Field::new("until", "Found until", FieldKind::Date { optional: true })
                .with_hint("YYYY-MM-DD")
                .with_text(&f.until.map(|d| d.to_string()).unwrap_or_default()),
        );
        form.push_field(
            Field::new("text", "Text", FieldKind::Text { required: false })
                .with_text(f.text.as_deref().unwrap_or("")),
        );
        form.mark_clean();
        self.edit = Some(EditState {
            kind: EditKind::Filter,
            form,
            base: None,
            conflict: false,
        });
        self.stack.push(Screen::Edit);
    }

    pub(super) fn apply_filter(&mut self) {
        let Some(edit) = &self.edit else { return };
        if let Some((_, e)) = edit.form.first_error() {
            self.error(e);
            return;
        }
        let form = &edit.form;
        let opt = |k: &str| {
            let t = form.text(k);
            if t.is_empty() {
                None
            } else {
                Some(t)
            }
        };
        let date = |k: &str| match form.field(k).map(|f| f.value()) {
            Some(Ok(field::FieldValue::Date(d))) => Some(d),
            _ => None,
        };
        let filter = crate::store::model::Filter {
            status: opt("status"),
            cause: opt("cause"),
            origin_type: opt("origin_type"),
            supplier: opt("supplier"),
            lot: opt("lot"),
            site: opt("site"),
            since: date("since"),
            until: date("until"),
            text: opt("text"),
            bench: opt("bench"),
        };
        self.log.filter = filter;
        self.edit = None;
        self.stack.pop();
        self.reload_log();
    }
}
