//! The fleet review: one panel at a time (Tab moves), each readable at 80×24. Reads
//! `app.review.data`, computed when the screen opened or the grouping changed.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Style};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::canvas::{Canvas, Line as CLine};
use ratatui::widgets::Widget;
use ratatui::Frame;
use unicode_width::UnicodeWidthStr;

use crate::app::review::{Panel, ReviewData, ReviewState};
use crate::app::{group_thousands, App};
use crate::store::model::LookupKind;
use crate::tui::theme::Theme;
use crate::tui::widgets::{clean, fit, fit_left, wrap};
use shardlog_core::fleet::group::NOT_RECORDED;
use shardlog_core::fleet::{Key, FLAG_WORD};
use shardlog_core::text::pad_left;
use shardlog_core::units::{fmt_sig, to_mpa};

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    if body.width < 4 || body.height < 3 {
        return;
    }
    let r = &app.review;
    let [tabs, note, content] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Length(2),
        Constraint::Fill(1),
    ])
    .areas(body);
    draw_tabs(r, f, tabs, th);
    let w = note.width as usize;
    let Some(d) = &r.data else {
        let why = r
            .error
            .clone()
            .unwrap_or_else(|| "no figures: open the review from the log (r)".to_string());
        put(f, note, &format!(" {}", clean(&why)), w, th.error);
        return;
    };
    let labels = Labels(&app.lists);
    match r.panel {
        Panel::Causes => causes(r, d, &labels, f, note, content, th),
        Panel::Months => months(r, d, &labels, f, note, content, th),
        Panel::Stress => stress(d, f, note, content, th),
        Panel::Weibull => weibull(r, d, &labels, f, note, content, th),
        Panel::Groups => groups(r, d, &labels, f, note, content, th),
        Panel::HeatSoak => super::review_soak::draw(d, f, note, content, th),
    }
}

fn put(f: &mut Frame, area: Rect, text: &str, w: usize, style: Style) {
    if area.height == 0 || w == 0 {
        return;
    }
    f.buffer_mut()
        .set_stringn(area.x, area.y, fit_left(&fit(text, w), w), w, style);
}

/// Text over the rows of `area`, wrapped at words (the last row cut with … if it must be).
fn put_wrapped(f: &mut Frame, area: Rect, text: &str, style: Style) {
    let w = area.width as usize;
    if area.height == 0 || w < 2 {
        return;
    }
    let lines = wrap(text.trim_start(), w - 1);
    let h = area.height as usize;
    for (i, l) in lines.iter().take(h).enumerate() {
        let shown = if i + 1 == h && lines.len() > h {
            fit(&format!("{l} {}", lines[h..].join(" ")), w - 1)
        } else {
            l.clone()
        };
        put(
            f,
            Rect {
                y: area.y + i as u16,
                height: 1,
                ..area
            },
            &format!(" {shown}"),
            w,
            style,
        );
    }
}

/// Group values as people read them: lookup codes by their labels.
struct Labels<'a>(&'a crate::app::incident::Lists);

impl Labels<'_> {
    fn of(&self, keys: &[Key], values: &[String]) -> String {
        let parts: Vec<String> = keys
            .iter()
            .zip(values)
            .map(|(k, v)| {
                let kind = match k {
                    Key::Cause => Some(LookupKind::CauseCategory),
                    Key::OriginType => Some(LookupKind::OriginType),
                    _ => None,
                };
                match kind {
                    Some(kind) if v != NOT_RECORDED => self.0.label(kind, v),
                    Some(LookupKind::CauseCategory) => "no cause recorded yet".to_string(),
                    _ => v.clone(),
                }
            })
            .collect();
        clean(&parts.join(" · "))
    }
}

fn draw_tabs(r: &ReviewState, f: &mut Frame, area: Rect, th: &Theme) {
    let mut spans = vec![Span::raw(" ")];
    for (i, p) in Panel::ALL.iter().enumerate() {
        if i > 0 {
            spans.push(Span::styled(" │ ", th.muted));
        }
        let style = if *p == r.panel { th.selected } else { th.label };
        spans.push(Span::styled(p.title(), style));
    }
    spans.push(Span::styled(
        format!("   by {}", r.grouping_label()),
        th.muted,
    ));
    Line::from(spans).render(area, f.buffer_mut());
}

/// The first row to show so that `selected` is visible in `rows` lines.
fn scroll_start(selected: usize, rows: usize) -> usize {
    if rows == 0 {
        0
    } else {
        selected.saturating_sub(rows - 1)
    }
}

/// One horizontal bar of `value` out of `max` in `width` cells (eighths for the tail).
fn bar(value: f64, max: f64, width: usize) -> String {
    if !(max.is_finite() && max > 0.0 && value.is_finite() && value > 0.0) || width == 0 {
        return String::new();
    }
    let eighths = ((value / max) * width as f64 * 8.0).round() as usize;
    let eighths = eighths.clamp(1, width * 8);
    let full = eighths / 8;
    let part = eighths % 8;
    let mut s = "█".repeat(full);
    if part > 0 {
        s.push(['▏', '▎', '▍', '▌', '▋', '▊', '▉'][part - 1]);
    }
    s
}

/// Rows of `label │ bar │ figure`, with the selection highlighted and kept in view.
fn bars(
    f: &mut Frame,
    area: Rect,
    rows: &[(String, f64, String)],
    selected: Option<usize>,
    th: &Theme,
) {
    let h = area.height as usize;
    let w = area.width as usize;
    if h == 0 || w < 10 {
        return;
    }
    let max = rows.iter().map(|r| r.1).fold(0.0, f64::max);
    let lw = rows
        .iter()
        .map(|r| UnicodeWidthStr::width(r.0.as_str()))
        .max()
        .unwrap_or(0)
        .clamp(4, (w / 3).max(4));
    let fw = rows
        .iter()
        .map(|r| UnicodeWidthStr::width(r.2.as_str()))
        .max()
        .unwrap_or(0)
        .min(w / 2);
    let bw = w.saturating_sub(lw + fw + 5);
    let start = scroll_start(selected.unwrap_or(0), h);
    for (line, (i, (label, v, fig))) in rows.iter().enumerate().skip(start).take(h).enumerate() {
        let y = area.y + line as u16;
        let sel = selected == Some(i);
        let marker = if sel { "▶" } else { " " };
        let lstyle = if sel { th.selected } else { th.label };
        let buf = f.buffer_mut();
        buf.set_stringn(area.x, y, marker, 1, th.focus_label);
        buf.set_stringn(area.x + 1, y, fit_left(&fit(label, lw), lw), lw, lstyle);
        let b = bar(*v, max, bw);
        let bx = area.x + 2 + lw as u16;
        buf.set_stringn(bx, y, &b, bw, th.figure);
        let fx = bx + bw as u16 + 1;
        buf.set_stringn(fx, y, fit(fig, fw + 1), fw + 1, th.base);
    }
    if rows.is_empty() {
        f.buffer_mut()
            .set_stringn(area.x + 1, area.y, "nothing in this window", w, th.muted);
    }
}

fn pct(share: f64) -> String {
    format!("{:.0} %", share * 100.0)
}

fn causes(
    r: &ReviewState,
    d: &ReviewData,
    labels: &Labels<'_>,
    f: &mut Frame,
    note: Rect,
    area: Rect,
    th: &Theme,
) {
    put_wrapped(
        f,
        note,
        &format!(
            "Causes, largest first, no cause yet last · {} incidents · Enter opens the highlighted cause in the log",
            group_thousands(d.causes.total)
        ),
        th.header,
    );
    let rows: Vec<(String, f64, String)> = d
        .causes
        .rows
        .iter()
        .map(|g| {
            (
                labels.of(&d.causes.keys, &g.key),
                g.count as f64,
                format!("{} ({})", group_thousands(g.count), pct(g.share)),
            )
        })
        .collect();
    bars(f, area, &rows, Some(r.selected()), th);
}

fn trend_text(d: &ReviewData) -> (String, bool) {
    match &d.trend {
        Ok(t) => {
            let flag = if t.rising {
                "RISING ▲"
            } else if t.falling {
                "falling ▼"
            } else {
                "no significant trend"
            };
            (
                format!(
                    "Trend: {flag} · rate ×{} per year (95 % {}–{}), p = {} · Poisson regression \
                     of monthly counts, offset by the month's {}",
                    fmt_sig(t.ratio_per_year, 3),
                    fmt_sig(t.ratio_ci95.low, 2),
                    fmt_sig(t.ratio_ci95.high, 2),
                    fmt_sig(t.p_value, 2),
                    t.basis.name()
                ),
                t.rising,
            )
        }
        Err(e) => (format!("Trend: not estimated ({})", clean(e)), false),
    }
}

/// A group's trend line, whether it is flagged, and its months.
type GroupMonths<'a> = (String, bool, &'a [shardlog_core::fleet::MonthCount]);

/// The trend line of the group highlighted on the Groups panel, with its months, when the
/// per-month panel shows that group (`g`).
fn group_months<'a>(
    r: &ReviewState,
    d: &'a ReviewData,
    labels: &Labels<'_>,
) -> Option<Result<GroupMonths<'a>, String>> {
    if !r.group_months {
        return None;
    }
    let i = r.selected_in(Panel::Groups);
    let (row, g) = match (d.table.rows.get(i), d.group_trends.get(i)) {
        (Some(row), Some(Some(g))) => (row, g),
        _ => {
            return Some(Err(
                "Per month of a group: none for this grouping (a group that is one month or one season has no months to chart) · g: whole fleet"
                    .to_string(),
            ))
        }
    };
    let name = labels.of(&d.table.keys, &row.key);
    Some(match &g.trend {
        Ok(t) => {
            let flag = if g.rising {
                "RISING ▲"
            } else if g.falling {
                "falling ▼"
            } else {
                "no significant trend"
            };
            Ok((
                format!(
                    "{name}: {flag} · rate ×{} per year (95 % {}–{}), p = {}, Holm-adjusted p = {} \
                     over {} groups · g: whole fleet",
                    fmt_sig(t.ratio_per_year, 3),
                    fmt_sig(t.ratio_ci95.low, 2),
                    fmt_sig(t.ratio_ci95.high, 2),
                    fmt_sig(t.p_value, 2),
                    g.p_adjusted.map_or("—".to_string(), |p| fmt_sig(p, 2)),
                    d.group_trends
                        .iter()
                        .filter(|g| matches!(g, Some(x) if x.trend.is_ok()))
                        .count(),
                ),
                g.rising,
                t.months.as_slice(),
            ))
        }
        Err(e) => Err(format!(
            "{name}: trend not estimated ({}) · g: whole fleet",
            clean(&e.to_string())
        )),
    })
}

/// The season of the group highlighted on the Groups panel, from its own months, when the
/// per-month panel charts that group.
fn group_season(
    r: &ReviewState,
    d: &ReviewData,
    labels: &Labels<'_>,
) -> Option<(String, shardlog_core::fleet::Seasonality)> {
    if !r.group_months {
        return None;
    }
    let i = r.selected_in(Panel::Groups);
    let row = d.table.rows.get(i)?;
    let t = d.group_trends.get(i)?.as_ref()?.trend.as_ref().ok()?;
    Some((
        labels.of(&d.table.keys, &row.key),
        shardlog_core::fleet::seasonality_of_months(&t.months),
    ))
}

fn months(
    r: &ReviewState,
    d: &ReviewData,
    labels: &Labels<'_>,
    f: &mut Frame,
    note: Rect,
    area: Rect,
    th: &Theme,
) {
    let (text, alarm, months) = match group_months(r, d, labels) {
        Some(Ok((text, alarm, months))) => (text, alarm, months),
        Some(Err(e)) => (e, false, d.months.as_slice()),
        None => {
            let (text, alarm) = trend_text(d);
            (text, alarm, d.months.as_slice())
        }
    };
    put_wrapped(f, note, &text, if alarm { th.warning } else { th.header });
    let rows: Vec<(String, f64, String)> = months
        .iter()
        .map(|m| {
            let full = shardlog_core::fleet::group::month_bounds(m.year, m.month)
                .map(|(a, b)| (b - a).num_days() + 1)
                .unwrap_or(m.days);
            let part = if m.days < full {
                format!(" ({} d)", m.days)
            } else {
                String::new()
            };
            let rate = if m.pane_years > 0.0 {
                format!(
                    "{:>3}  {:>4} /1000 pane-yr{part}",
                    m.count,
                    fmt_sig(m.count as f64 / m.pane_years * 1000.0, 2)
                )
            } else {
                format!("{:>3}{part}", m.count)
            };
            (m.label(), m.count as f64, rate)
        })
        .collect();
    let mut area = area;
    // the season of what the panel charts: the highlighted group's own months, or the fleet's
    let own = group_season(r, d, labels);
    let season = match &own {
        Some((name, sz)) => Some((format!("Season of {name}"), sz)),
        None => d.seasonality.as_ref().map(|sz| {
            let title = if r.group_months {
                "Season (whole fleet)"
            } else {
                "Season"
            };
            (title.to_string(), sz)
        }),
    };
    if let (Some((title, sz)), true) = (season, area.height >= 7) {
        const NAMES: [&str; 12] = [
            "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec",
        ];
        let peaks: Vec<&str> = sz
            .peak_months
            .iter()
            .filter_map(|m| NAMES.get((*m as usize).wrapping_sub(1)).copied())
            .collect();
        let peaks = if peaks.is_empty() {
            "none".to_string()
        } else {
            peaks.join(", ")
        };
        let text = format!(
            "{title}: peaks {peaks} · p = {} · χ² of counts per month of year against its {}",
            fmt_sig(sz.p_value, 2),
            sz.basis.name()
        );
        let counts: Vec<String> = NAMES
            .iter()
            .zip(sz.observed)
            .map(|(m, n)| format!("{m} {n}"))
            .collect();
        let mut per_month = format!(" {}", counts.join(" "));
        if UnicodeWidthStr::width(per_month.as_str()) > area.width as usize {
            per_month = format!(" {}", counts.join(" ").replace(' ', ""));
        }
        area.height -= 2;
        let last = Rect {
            y: area.y + area.height,
            height: 1,
            ..area
        };
        put(f, last, &format!(" {text}"), last.width as usize, th.muted);
        let below = Rect {
            y: last.y + 1,
            ..last
        };
        put(f, below, &per_month, below.width as usize, th.muted);
    }
    bars(f, area, &rows, Some(r.selected()), th);
}

fn stress(d: &ReviewData, f: &mut Frame, note: Rect, area: Rect, th: &Theme) {
    let (edges, counts, width) = &d.histogram;
    let n: u64 = counts.iter().sum();
    if let Some(cap) = d.stresses_over_cap {
        put_wrapped(
            f,
            note,
            &format!(
                "Applied stress at fracture: more than {} incidents of this window have a \
                 back-calculated stress, more than the fleet database reads one by one: \
                 `stats --weibull` over a narrower selection fits them",
                group_thousands(cap)
            ),
            th.warning,
        );
        return;
    }
    put_wrapped(
        f,
        note,
        &format!(
            "Applied stress at fracture (net of residual stress), {n} incidents with a \
             back-calculated stress; {} without one",
            d.without_stress
        ),
        th.header,
    );
    let rows: Vec<(String, f64, String)> = edges
        .iter()
        .zip(counts)
        .map(|(lo, c)| {
            (
                format!(
                    "{}–{} MPa",
                    fmt_sig(to_mpa(*lo), 3),
                    fmt_sig(to_mpa(lo + width), 3)
                ),
                *c as f64,
                c.to_string(),
            )
        })
        .collect();
    if rows.is_empty() {
        put(
            f,
            area,
            "  no back-calculated stresses in this window",
            area.width as usize,
            th.muted,
        );
        return;
    }
    bars(f, area, &rows, None, th);
}

fn weibull(
    r: &ReviewState,
    d: &ReviewData,
    labels: &Labels<'_>,
    f: &mut Frame,
    note: Rect,
    area: Rect,
    th: &Theme,
) {
    let fit_r = match &d.weibull {
        Ok(fit) => fit,
        Err(e) => {
            put_wrapped(
                f,
                note,
                &format!("Weibull fit: not possible ({})", clean(e)),
                th.warning,
            );
            return;
        }
    };
    // the group highlighted on the Groups panel, beside the whole window
    let grp = d
        .table
        .rows
        .get(r.selected_in(Panel::Groups))
        .filter(|g| g.count < d.table.total)
        .and_then(|g| match &g.weibull {
            Some(Ok(w)) => Some((labels.of(&d.table.keys, &g.key), w)),
            _ => None,
        });
    let one = |w: &shardlog_core::fleet::WeibullFit| {
        format!(
            "m = {} (95\u{a0}% {}–{} {}), σθ = {} MPa, n = {}",
            fmt_sig(w.modulus, 3),
            fmt_sig(w.modulus_ci95.low, 2),
            fmt_sig(w.modulus_ci95.high, 2),
            w.modulus_bounds_method.short(),
            fmt_sig(to_mpa(w.scale), 3),
            w.n
        )
    };
    let text = match &grp {
        Some((label, w)) => format!(
            "● all: {} · ○ {label}: {} · ML (ASTM C1239), applied stress",
            one(fit_r),
            one(w)
        ),
        None => format!(
            "Weibull {} · maximum likelihood (ASTM C1239) of the applied stress at fracture \
             (the group highlighted on Groups is drawn beside it)",
            one(fit_r)
        ),
    };
    put_wrapped(f, note, &text, th.header);
    if area.height < 4 || area.width < 20 || fit_r.plot.is_empty() {
        return;
    }
    // axis labels: P on the left, stress below
    let [plot_rows, xlab] =
        Layout::vertical([Constraint::Fill(1), Constraint::Length(1)]).areas(area);
    let [ylab, plot] =
        Layout::horizontal([Constraint::Length(7), Constraint::Fill(1)]).areas(plot_rows);
    let gplot: &[shardlog_core::fleet::weibull::PlotPoint] =
        grp.as_ref().map(|g| &g.1.plot[..]).unwrap_or(&[]);
    let xs: Vec<f64> = fit_r.plot.iter().map(|p| p.x).collect();
    let ys: Vec<f64> = fit_r.plot.iter().map(|p| p.y).collect();
    let all_x: Vec<f64> = xs
        .iter()
        .copied()
        .chain(gplot.iter().map(|p| p.x))
        .collect();
    let all_y: Vec<f64> = ys
        .iter()
        .copied()
        .chain(gplot.iter().map(|p| p.y))
        .collect();
    let (x0, x1) = span(&all_x);
    let (y0, y1) = span(&all_y);
    let pts: Vec<(f64, f64)> = xs.iter().copied().zip(ys.iter().copied()).collect();
    let line = CLine {
        x1: x0,
        y1: fit_r.plot_line(x0),
        x2: x1,
        y2: fit_r.plot_line(x1),
        color: Color::Cyan,
    };
    Canvas::default()
        .marker(Marker::Braille)
        .x_bounds([x0, x1])
        .y_bounds([y0, y1])
        .paint(|ctx| {
            ctx.draw(&line);
            if let Some((_, g)) = &grp {
                ctx.draw(&CLine {
                    x1: x0,
                    y1: g.plot_line(x0),
                    x2: x1,
                    y2: g.plot_line(x1),
                    color: Color::Magenta,
                });
            }
        })
        .render(plot, f.buffer_mut());
    // the incidents as whole-cell marks over the line, so they read at any size
    let gpts: Vec<(f64, f64, &str)> = gplot.iter().map(|p| (p.x, p.y, "○")).collect();
    let marks: Vec<(f64, f64, &str)> = pts.iter().map(|(x, y)| (*x, *y, "●")).chain(gpts).collect();
    draw_marks(f, plot, [x0, x1], [y0, y1], &marks, th);
    let p_of = |y: f64| 100.0 * -(-(y.exp())).exp_m1();
    let buf = f.buffer_mut();
    buf.set_stringn(
        ylab.x,
        ylab.y,
        format!("{:>5}%", fmt_sig(p_of(y1), 3)),
        7,
        th.muted,
    );
    if ylab.height > 1 {
        buf.set_stringn(
            ylab.x,
            ylab.y + ylab.height - 1,
            format!("{:>5}%", fmt_sig(p_of(y0), 3)),
            7,
            th.muted,
        );
    }
    let lo = format!("{} MPa", fmt_sig(to_mpa(x0.exp()), 3));
    let hi = format!("{} MPa", fmt_sig(to_mpa(x1.exp()), 3));
    let mid = "stress, log scale · ● incidents · line: the fit";
    let xw = xlab.width as usize;
    buf.set_stringn(plot.x, xlab.y, &lo, xw, th.muted);
    let hw = UnicodeWidthStr::width(hi.as_str());
    if xw > hw + lo.len() + 2 {
        buf.set_stringn(xlab.x + (xw - hw) as u16, xlab.y, &hi, hw, th.muted);
        let mw = UnicodeWidthStr::width(mid);
        if xw > hw + lo.len() + mw + 6 {
            let mx = xlab.x + ((xw - mw) / 2) as u16;
            buf.set_stringn(mx, xlab.y, mid, mw, th.muted);
        }
    }
}

/// The incidents as whole-cell marks at their place in `plot` (x and y from low to high).
fn draw_marks(
    f: &mut Frame,
    plot: Rect,
    [x0, x1]: [f64; 2],
    [y0, y1]: [f64; 2],
    marks: &[(f64, f64, &str)],
    th: &Theme,
) {
    for (x, y, mark) in marks {
        let style = if *mark == "○" {
            th.warning
        } else {
            th.figure
        };
        let cx = ((x - x0) / (x1 - x0) * (plot.width.saturating_sub(1)) as f64).round();
        let cy = ((y1 - y) / (y1 - y0) * (plot.height.saturating_sub(1)) as f64).round();
        if cx.is_finite() && cy.is_finite() && cx >= 0.0 && cy >= 0.0 {
            let (cx, cy) = (cx as u16, cy as u16);
            if cx < plot.width && cy < plot.height {
                f.buffer_mut()
                    .set_stringn(plot.x + cx, plot.y + cy, mark, 1, style);
            }
        }
    }
}

/// The range of `v` with a margin (a single value gets a unit-wide range).
fn span(v: &[f64]) -> (f64, f64) {
    let lo = v.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !(lo.is_finite() && hi.is_finite()) {
        return (0.0, 1.0);
    }
    if hi - lo < 1e-9 {
        return (lo - 0.5, hi + 0.5);
    }
    (lo, hi)
}

fn groups(
    r: &ReviewState,
    d: &ReviewData,
    labels: &Labels<'_>,
    f: &mut Frame,
    note: Rect,
    area: Rect,
    th: &Theme,
) {
    let t = &d.table;
    let flags = t.rows.iter().any(|g| g.p_adjusted.is_some());
    let note_text = if d.exposure_rows == 0 {
        "No exposure recorded (panes in service with install dates): counts only, no rates."
            .to_string()
    } else {
        let basis = if t.keys.iter().any(|k| k.is_exposure()) {
            "each group against its own panes in service"
        } else {
            "not an exposure key: each group against the whole fleet's panes"
        };
        let rest = if flags {
            format!("{FLAG_WORD}: above the rest, exact test, Holm 5 %.")
        } else {
            "No group is tested against the rest.".to_string()
        };
        format!(
            "Rate per 1,000 pane-years ({basis}; pane-yr column, {} in all). {rest}",
            fmt_sig(t.total_pane_years, 3)
        )
    };
    put_wrapped(f, note, &note_text, th.header);
    if area.height < 2 {
        return;
    }
    let wide = area.width >= 96;
    // every cell first: the number columns take the width their figures need, so a number
    // is never cut; the group name gets what is left
    let cells_of = |g: &shardlog_core::fleet::GroupRow| {
        let mut cells: Vec<String> = vec![
            group_thousands(g.count),
            pct(g.share),
            g.rate.map(|x| fmt_sig(x.rate, 3)).unwrap_or("—".into()),
            g.rate
                .map(|x| format!("{}–{}", fmt_sig(x.ci95.low, 2), fmt_sig(x.ci95.high, 2)))
                .unwrap_or("—".into()),
            g.rate.map(|x| fmt_sig(x.exposure, 3)).unwrap_or("—".into()),
        ];
        if wide {
            cells.push(g.ratio.map(|x| fmt_sig(x.ratio, 2)).unwrap_or("—".into()));
        }
        cells.push(g.p_adjusted.map(p_short).unwrap_or("—".into()));
        cells.push(if g.flagged { FLAG_WORD } else { "" }.to_string());
        cells
    };
    let all_cells: Vec<Vec<String>> = t.rows.iter().map(cells_of).collect();
    let mut cols: Vec<(&str, usize)> = vec![
        ("n", 3),
        ("share", 5),
        ("rate", 4),
        ("95 % CI", 7),
        ("pane-yr", 7),
    ];
    if wide {
        cols.push(("ratio", 5));
    }
    cols.push(("p Holm", 6));
    cols.push(("flag", 4));
    for cells in &all_cells {
        for (c, col) in cells.iter().zip(cols.iter_mut()) {
            col.1 = col.1.max(UnicodeWidthStr::width(c.as_str()));
        }
    }
    let fixed: usize = cols.iter().map(|c| c.1 + 1).sum();
    let kw = (area.width as usize).saturating_sub(fixed + 2).max(6);
    let mut header = format!(" {}", fit_left("group", kw));
    for (h, cw) in &cols {
        header.push(' ');
        header.push_str(&lpad(h, *cw));
    }
    let aw = area.width as usize;
    put(f, area, &header, aw, th.header);
    let body = Rect {
        y: area.y + 1,
        height: area.height - 1,
        ..area
    };
    let h = body.height as usize;
    let sel = r.selected();
    let start = scroll_start(sel, h);
    for (line, (i, g)) in t.rows.iter().enumerate().skip(start).take(h).enumerate() {
        let mut s = String::new();
        s.push(if i == sel { '▶' } else { ' ' });
        let parts: Vec<String> = t
            .keys
            .iter()
            .zip(&g.key)
            .map(|(k, v)| labels.of(std::slice::from_ref(k), std::slice::from_ref(v)))
            .collect();
        s.push_str(&fit_left(&fit_parts(&parts, kw), kw));
        for (c, (_, cw)) in all_cells[i].iter().zip(&cols) {
            s.push(' ');
            s.push_str(&lpad(c, *cw));
        }
        let style = if i == sel {
            th.selected
        } else if g.flagged {
            th.warning
        } else {
            th.base
        };
        let y = body.y + line as u16;
        f.buffer_mut()
            .set_stringn(body.x, y, fit_left(&fit(&s, aw), aw), aw, style);
    }
    if t.rows.is_empty() {
        put(f, body, "  nothing in this window", aw, th.muted);
    }
}

/// A p-value short enough for its column, never cut: below 0.001 it reads "<0.001".
fn p_short(p: f64) -> String {
    if p < 0.001 {
        "<0.001".to_string()
    } else {
        fmt_sig(p, 2)
    }
}

/// The values of a two-key group joined by " · " in `width` cells. When they do not fit, the
/// first values give way (each shortened with "…" in turn) and the last is kept whole as long
/// as it fits alone, so that rows differing only in the last key stay distinguishable.
fn fit_parts(parts: &[String], width: usize) -> String {
    let joined = parts.join(" · ");
    if UnicodeWidthStr::width(joined.as_str()) <= width || parts.len() < 2 {
        return fit(&joined, width);
    }
    let last = &parts[parts.len() - 1];
    let last_w = UnicodeWidthStr::width(last.as_str());
    let sep = 3 * (parts.len() - 1);
    if last_w + sep + 2 > width {
        return fit(&joined, width);
    }
    let room = width - last_w - sep;
    let each = room / (parts.len() - 1);
    let firsts: Vec<String> = parts[..parts.len() - 1]
        .iter()
        .map(|p| fit(p, each.max(1)))
        .collect();
    format!("{} · {last}", firsts.join(" · "))
}

fn lpad(s: &str, w: usize) -> String {
    pad_left(&fit(s, w), w)
}
