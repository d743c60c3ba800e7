//! The review's heat-soak panel: nickel sulfide breakage of heat-soaked lots against lots
//! not soaked (EN 14179-1), and the time in service to breakage of the inclusion failures.

use ratatui::layout::Rect;
use ratatui::text::Line;
use ratatui::widgets::Widget;
use ratatui::Frame;

use crate::app::review::ReviewData;
use crate::tui::theme::Theme;
use crate::tui::widgets::{self, clean, fit};
use shardlog_core::units::fmt_sig;

pub fn draw(d: &ReviewData, f: &mut Frame, note: Rect, area: Rect, th: &Theme) {
    let w = note.width as usize;
    let c = match &d.soak {
        Ok(c) => c,
        Err(e) => {
            widgets::para(vec![Line::styled(fit(&clean(e), w), th.error)])
                .render(note, f.buffer_mut());
            return;
        }
    };
    widgets::para(vec![Line::styled(
        fit(
            "Nickel sulfide (NiS) breaks by the lot's heat-soak test (EN 14179-1)",
            w,
        ),
        th.header,
    )])
    .render(note, f.buffer_mut());
    let aw = area.width as usize;
    let mut lines = vec![Line::styled(
        fit(
            &format!(
                " {:<17}{:>5}{:>10}{:>6}  {}",
                "lots", "lots", "incidents", "NiS", "NiS per 1,000 pane-years (95 %)"
            ),
            aw,
        ),
        th.label,
    )];
    for r in &c.rows {
        let rate = match &r.rate {
            Some(rt) => format!(
                "{} ({} – {})",
                fmt_sig(rt.rate, 3),
                fmt_sig(rt.ci95.low, 3),
                fmt_sig(rt.ci95.high, 3)
            ),
            None => "no exposure of these lots".into(),
        };
        lines.push(Line::raw(fit(
            &format!(
                " {:<17}{:>5}{:>10}{:>6}  {rate}",
                r.class.label(),
                r.lots,
                r.incidents,
                r.nickel_sulfide
            ),
            aw,
        )));
    }
    lines.push(Line::raw(""));
    let s = &c.service;
    lines.push(Line::styled(
        fit(
            &match s.median_years {
                Some(m) => format!(
                    " Time in service to a NiS break: {} with an install date, median {} years",
                    s.count,
                    fmt_sig(m, 3)
                ),
                None => " Time in service to a NiS break: no NiS break has an install date".into(),
            },
            aw,
        ),
        th.header,
    ));
    let most = s.by_year.iter().map(|(_, n)| *n).max().unwrap_or(1).max(1);
    let bar_room = aw.saturating_sub(32).max(1) as u64;
    for (y, n) in &s.by_year {
        let bar = ((*n * bar_room).div_ceil(most)) as usize;
        lines.push(Line::raw(fit(
            &format!(
                " year {:>2} ({y} to {} years) {n:>5} {}",
                y + 1,
                y + 1,
                "█".repeat(bar)
            ),
            aw,
        )));
    }
    if s.without_install_date > 0 {
        lines.push(Line::styled(
            fit(
                &format!(
                    " {} NiS breaks have no install date (not counted)",
                    s.without_install_date
                ),
                aw,
            ),
            th.muted,
        ));
    }
    widgets::para(lines).render(area, f.buffer_mut());
}
