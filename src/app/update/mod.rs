//! How the app answers an action: a pending question first, then the help overlay, then
//! the screen on top, each in its own file.

mod bench;
mod edit;
mod fleet;
mod incident;
mod log;
mod lookups;
mod practice;
mod review;

use crate::app::bench::BenchState;
use crate::app::{Action, App, Prompt, Screen, LOG_CHROME_ROWS};
use crate::store::StoreError;

impl App {
    /// Apply one action.
    pub fn update(&mut self, action: Action) {
        if let Action::Resize { width, height } = action {
            self.width = width;
            self.height = height;
            let rows = height.saturating_sub(LOG_CHROME_ROWS).max(1) as usize;
            let r = self
                .log
                .set_page_size(rows, crate::app::read_side(&self.store, &self.fleet));
            self.report(r);
            return;
        }
        // a message lasts until the next key
        self.message = None;
        if self.name_entry.is_some() {
            self.update_name_entry(action);
            return;
        }
        if let Some(prompt) = self.prompt.clone() {
            match action {
                Action::Yes => {
                    self.prompt = None;
                    match prompt {
                        Prompt::DiscardChanges => self.leave_screen(),
                        Prompt::QuitDiscard => self.quit = true,
                        Prompt::SaveDuplicate(_) => {
                            self.duplicate_confirmed = true;
                            self.save_edit();
                        }
                        Prompt::Revert { seq, .. } => self.revert_incident(seq),
                    }
                }
                Action::No | Action::Back => {
                    self.prompt = None;
                    match prompt {
                        Prompt::SaveDuplicate(_) => {
                            self.info("not saved; your input is kept (Esc leaves it)")
                        }
                        _ => self.info("kept your changes"),
                    }
                }
                _ => {}
            }
            return;
        }
        if self.help_open {
            match action {
                Action::QuitAll => {
                    self.help_open = false;
                    self.update(Action::QuitAll);
                }
                Action::ToggleHelp | Action::Back | Action::Quit => {
                    self.help_open = false;
                    self.help_scroll = 0;
                }
                Action::Down | Action::ScrollDown => {
                    self.help_scroll = self
                        .help_scroll
                        .saturating_add(1)
                        .min(self.help_scroll_max.get())
                }
                Action::Up | Action::ScrollUp => {
                    self.help_scroll = self.help_scroll.saturating_sub(1)
                }
                Action::PageDown => {
                    self.help_scroll = self
                        .help_scroll
                        .saturating_add(10)
                        .min(self.help_scroll_max.get())
                }
                Action::PageUp => self.help_scroll = self.help_scroll.saturating_sub(10),
                Action::Home => self.help_scroll = 0,
                _ => {}
            }
            return;
        }
        match action {
            Action::ToggleHelp => {
                self.help_open = true;
                return;
            }
            Action::QuitAll => {
                if self.has_unsaved() {
                    self.prompt = Some(Prompt::QuitDiscard);
                } else {
                    self.quit = true;
                }
                return;
            }
            Action::Quit if self.at_top() => {
                self.quit = true;
                return;
            }
            Action::Quit | Action::Back
                if !(self.screen() == Screen::Log && self.search.is_some()) =>
            {
                if self.has_unsaved() {
                    self.prompt = Some(Prompt::DiscardChanges);
                } else if self.at_top() {
                    self.info("press q to quit");
                } else {
                    self.leave_screen();
                }
                return;
            }
            _ => {}
        }
        if self.refuse_fleet_edit(&action) {
            return;
        }
        match self.screen() {
            Screen::Log => self.update_log(action),
            Screen::Incident => self.update_incident(action),
            Screen::Edit => self.update_edit(action),
            Screen::Bench => self.update_bench(action),
            Screen::Review => self.update_review(action),
            Screen::Materials => self.update_materials(action),
            Screen::Lookups => self.update_lookups(action),
        }
    }

    fn update_name_entry(&mut self, action: Action) {
        let Some(entry) = self.name_entry.as_mut() else {
            return;
        };
        match action {
            Action::Confirm => {
                let name = shardlog_core::text::sanitize_for_terminal(entry.text().trim(), false);
                if name.is_empty() {
                    self.error(
                        "Your name: type it; every change and reading you make is recorded \
                         under it",
                    );
                    return;
                }
                self.name_entry = None;
                self.actor = name.clone();
                self.info(format!(
                    "changes and readings are recorded as {name} (SHARDLOG_USER overrides)"
                ));
                self.name_to_keep = Some(name);
            }
            Action::QuitAll => self.quit = true,
            Action::Input(i) => {
                entry.input(i);
            }
            Action::Paste(p) => entry.paste(&p),
            _ => {}
        }
    }

    pub(super) fn report<T>(&mut self, r: Result<T, StoreError>) -> Option<T> {
        match r {
            Ok(v) => Some(v),
            Err(e) => {
                self.error(e.to_string());
                None
            }
        }
    }

    pub(super) fn leave_screen(&mut self) {
        // a materials form closes back to the materials list
        if self.screen() == Screen::Materials && self.materials.form.take().is_some() {
            return;
        }
        if self.stack.len() <= 1 {
            return;
        }
        let left = self.stack.pop();
        match left {
            Some(Screen::Edit) => self.edit = None,
            Some(Screen::Bench) if self.bench_target.take().is_some() => {
                self.bench = BenchState::with_materials(std::mem::take(&mut self.bench.materials));
            }
            Some(Screen::Incident) => self.incident = None,
            Some(Screen::Review) if self.screen() == Screen::Log => {
                // the log beneath the review gets its own filter back
                if let Some(f) = self.log_filter_before_review.take() {
                    self.log.filter = f;
                    self.reload_log();
                }
            }
            _ => {}
        }
    }
}
