//! A form over an incident (or a new one, or the log's filters).

use ratatui::layout::Rect;
use ratatui::Frame;

use crate::app::App;
use crate::tui::theme::Theme;
use crate::tui::widgets;
use crate::tui::widgets::boxed;

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    let Some(edit) = &app.edit else {
        return;
    };
    let mut title = edit.title();
    if edit.form.is_dirty() {
        title.push_str(" · unsaved");
    }
    let inner = boxed(f, body, &title, true, th);
    widgets::draw_form(
        f.buffer_mut(),
        inner,
        &edit.form,
        !app.help_open && app.prompt.is_none(),
        th,
    );
}
