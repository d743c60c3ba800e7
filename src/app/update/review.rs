//! The fleet review: panels, grouping, window, and opening a group in the log.

use crate::app::review;
use crate::app::{Action, App, Screen};

impl App {
    /// Open the fleet review (figures computed now, from the store).
    pub fn open_review(&mut self) {
        // from a log the review opened: back to that review, not a second one on top
        if self.stack.contains(&Screen::Review) {
            while self.screen() != Screen::Review && self.stack.len() > 1 {
                self.leave_screen();
            }
        }
        self.reload_review();
        if self.screen() != Screen::Review {
            self.stack.push(Screen::Review);
        }
    }

    pub(super) fn reload_review(&mut self) {
        // the window ends today
        let today = self.stamp().at.date_naive();
        let Some(records) = crate::app::read_side(&self.store, &self.fleet) else {
            self.error("no database is open: the review needs the incident records");
            return;
        };
        self.review.load(records, today);
    }

    pub(super) fn update_review(&mut self, action: Action) {
        let page = self.height.saturating_sub(8).max(1) as i64;
        match action {
            Action::AddExposure => {
                let today = self.stamp().at.date_naive();
                self.edit = Some(crate::app::incident::EditState {
                    kind: crate::app::incident::EditKind::Exposure,
                    form: crate::app::incident::exposure_form(today, &self.lists),
                    base: None,
                    conflict: false,
                });
                self.stack.push(Screen::Edit);
            }
            Action::OpenLookups => self.open_lookups(),
            Action::NextSection | Action::Right => self.review.panel = self.review.panel.next(),
            Action::PrevSection | Action::Left => self.review.panel = self.review.panel.prev(),
            Action::Down | Action::ScrollDown => self.review.move_by(1),
            Action::Up | Action::ScrollUp => self.review.move_by(-1),
            Action::PageDown => self.review.move_by(page),
            Action::PageUp => self.review.move_by(-page),
            Action::Home => self.review.home(),
            Action::End => self.review.end(),
            Action::GroupFirst => {
                self.review.next_first_key();
                self.review.panel = review::Panel::Groups;
                self.reload_review();
            }
            Action::GroupSecond => {
                self.review.next_second_key();
                self.review.panel = review::Panel::Groups;
                self.reload_review();
            }
            Action::NextWindow => {
                self.review.next_window();
                self.reload_review();
            }
            Action::ToggleGroupMonths => {
                self.review.group_months = !self.review.group_months;
                self.review.panel = review::Panel::Months;
            }
            Action::Confirm => match self.review.selected_filter() {
                Ok((filter, _, _)) => {
                    if self.log_filter_before_review.is_none() {
                        self.log_filter_before_review = Some(self.log.filter.clone());
                    }
                    self.log.filter = filter;
                    // the filtered log opens over the review: Esc comes back to it
                    self.stack.push(Screen::Log);
                    // the filter line names the group; the status line gives its count
                    self.reload_log();
                }
                Err(e) => self.error(e),
            },
            _ => {}
        }
    }
}
