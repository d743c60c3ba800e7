//! The bench calculator: inputs on the left, live results on the right, cautions below.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;
use ratatui::Frame;

use crate::app::bench::Outcome;
use crate::app::App;
use crate::tui::cautions::CAUTIONS;
use crate::tui::theme::Theme;
use crate::tui::widgets::boxed;
use crate::tui::widgets::{self, clean};
use shardlog_core::fracture::Analysis;
use shardlog_core::units::{fmt_sig, format, Unit};

/// The short caution line shown when the window has no room for the full text.
pub const SHORT_CAUTION: &str =
    "⚠ Broken glass cuts: gloves, eye protection. Mirror estimates are \
                                 uncertain; the tool does not replace an investigator. F1: more";

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    let full: Vec<Line> = CAUTIONS
        .iter()
        .map(|c| Line::styled(format!("⚠ {c}"), th.caution))
        .collect();
    let full_rows: u16 = CAUTIONS
        .iter()
        .map(|c| widgets::wrap(&format!("⚠ {c}"), body.width as usize).len() as u16)
        .sum();
    let (caution_h, text) = if body.height >= 24 {
        (full_rows, full)
    } else {
        let rows = widgets::wrap(SHORT_CAUTION, body.width as usize).len() as u16;
        (rows.min(2), vec![Line::styled(SHORT_CAUTION, th.caution)])
    };
    let [main, caution] =
        Layout::vertical([Constraint::Fill(1), Constraint::Length(caution_h)]).areas(body);
    let (inputs, results) = if main.width >= 72 {
        let [a, b] =
            Layout::horizontal([Constraint::Percentage(45), Constraint::Fill(1)]).areas(main);
        (a, b)
    } else {
        let [a, b] =
            Layout::vertical([Constraint::Percentage(50), Constraint::Fill(1)]).areas(main);
        (a, b)
    };
    let title = match &app.bench_incident_label() {
        Some(r) => format!("Readings · {r}"),
        None => "Readings · no incident open".to_string(),
    };
    let inner = boxed(f, inputs, &title, true, th);
    widgets::draw_form(
        f.buffer_mut(),
        inner,
        &app.bench.form,
        !app.help_open && app.prompt.is_none(),
        th,
    );
    // the load hypothesis panel under the results, when a hypothesis is typed and there is
    // room; otherwise its lines are in the results pane only
    let results = match &app.bench.hypothesis {
        Some(h)
            if results.height >= RESULTS_MIN_ROWS + super::hypothesis::PANEL_MIN_ROWS
                && results.width >= 34 =>
        {
            let mut panel_h = (results.height * 3 / 5)
                .clamp(super::hypothesis::PANEL_MIN_ROWS, 22)
                .min(results.height - RESULTS_MIN_ROWS);
            if !matches!(h, Ok(c) if c.chart.is_ok()) {
                // no chart to draw: the panel holds its few lines only
                panel_h = 6;
            }
            let [r, p] =
                Layout::vertical([Constraint::Fill(1), Constraint::Length(panel_h)]).areas(results);
            let inner = boxed(f, p, "Load hypothesis · F2 inputs", false, th);
            super::hypothesis::draw_panel(f.buffer_mut(), inner, h, th);
            r
        }
        _ => results,
    };
    let inner = boxed(f, results, "Results (live) · PgUp/PgDn scroll", false, th);
    let lines = widgets::keep_figures_whole(result_lines(app, th, inner.width));
    let max_scroll = widgets::wrapped_rows(&lines, inner.width).saturating_sub(inner.height);
    app.bench.scroll_max.set(max_scroll);
    widgets::para(lines)
        .scroll((app.bench.scroll.min(max_scroll), 0))
        .render(inner, f.buffer_mut());
    widgets::spaces_for_no_breaks(f.buffer_mut(), inner);
    widgets::para(text).render(caution, f.buffer_mut());
}

/// Rows the results pane keeps when the hypothesis panel is beside it (the headline figures
/// stay in view at 80×24).
pub const RESULTS_MIN_ROWS: u16 = 9;

fn interval(lo: f64, hi: f64, unit: Unit) -> String {
    format!(
        "{} – {} {}",
        fmt_sig(unit.from_si(lo), 3),
        fmt_sig(unit.from_si(hi), 3),
        unit.symbol()
    )
}

/// A flaw or radius in the unit people read it in: µm below 1 mm, else mm.
fn length(m: f64) -> String {
    if m.abs() < 1e-3 {
        format(m, Unit::Micrometre)
    } else {
        format(m, Unit::Millimetre)
    }
}

fn length_unit(m: f64) -> Unit {
    if m.abs() < 1e-3 {
        Unit::Micrometre
    } else {
        Unit::Millimetre
    }
}

fn kv(key: &str, value: String, th: &Theme) -> Line<'static> {
    Line::from(vec![
        Span::styled(format!("{key}: "), th.label),
        Span::styled(value, th.figure),
    ])
}

/// The lines of the results pane (also used by tests to compare with the core).
pub fn result_lines(app: &App, th: &Theme, width: u16) -> Vec<Line<'static>> {
    let mut lines = outcome_lines(app, th, width);
    if !matches!(app.bench.outcome, Outcome::Done { .. }) {
        if let Some(h) = &app.bench.hypothesis {
            lines.extend(super::hypothesis::detail_lines(h, th));
        }
    }
    lines
}

fn outcome_lines(app: &App, th: &Theme, width: u16) -> Vec<Line<'static>> {
    match &app.bench.outcome {
        Outcome::Waiting => vec![
            Line::styled("Type mirror readings on the left:", th.muted),
            Line::styled("one radius per line, with its unit.", th.muted),
            Line::styled(
                "Stress, flaw size and checks appear here as you type.",
                th.muted,
            ),
        ],
        Outcome::Incomplete(e) => vec![
            Line::styled("Not computed yet:", th.warning),
            Line::styled(format!("✗ {}", clean(e)), th.error),
        ],
        Outcome::Refused(e) => vec![
            Line::styled("The calculation refuses this input:", th.warning),
            Line::styled(format!("✗ {}", clean(e)), th.error),
        ],
        Outcome::Done {
            analysis,
            per_geometry,
            ..
        } => {
            let mut lines = analysis_lines(analysis, per_geometry, th, width);
            // the hypothesis goes right under the headline figures
            if let Some(t) = app
                .bench
                .hypothesis
                .as_ref()
                .map(|h| super::hypothesis::detail_lines(h, th))
            {
                let at = lines
                    .iter()
                    .position(|l| {
                        l.to_string().starts_with("Warnings")
                            || l.to_string().starts_with("No warnings")
                    })
                    .unwrap_or(lines.len());
                for (i, l) in t.into_iter().enumerate() {
                    lines.insert(at + i, l);
                }
            }
            lines
        }
    }
}

fn analysis_lines(
    a: &Analysis,
    per_geometry: &[crate::app::bench::GeometryRow],
    th: &Theme,
    width: u16,
) -> Vec<Line<'static>> {
    let mut out = Vec::new();
    out.push(Line::styled(clean(&a.material_name), th.header));
    out.push(kv(
        &format!("Net stress ({})", a.headline.label()),
        format!(
            "{}  ({})",
            shardlog_core::text::stress(a.stress_pa),
            interval(a.stress_low_pa, a.stress_high_pa, Unit::Megapascal)
        ),
        th,
    ));
    out.push(kv(
        "Applied stress",
        format!(
            "{}  ({})",
            shardlog_core::text::stress(a.applied_stress_pa),
            interval(a.applied_low_pa, a.applied_high_pa, Unit::Megapascal)
        ),
        th,
    ));
    if let Some(fl) = &a.flaw {
        let u = length_unit(fl.size_m);
        out.push(kv(
            "Flaw size a",
            format!(
                "{}  ({})",
                length(fl.size_m),
                interval(fl.size_low_m, fl.size_high_m, u)
            ),
            th,
        ));
    }
    if a.warnings.is_empty() {
        out.push(Line::styled("No warnings.", th.ok));
    } else {
        out.push(Line::styled(
            format!("Warnings ({})", a.warnings.len()),
            th.warning,
        ));
        for w in &a.warnings {
            out.push(Line::styled(format!("! {}", clean(w)), th.warning));
        }
    }
    out.push(Line::styled(
        "Stress per boundary (95 % interval)",
        th.label,
    ));
    for b in &a.boundaries {
        out.push(Line::from(vec![
            Span::raw(format!(
                " {} n={} R̄ {}: ",
                b.boundary.label(),
                b.stats.n,
                length(b.stats.mean)
            )),
            Span::styled(shardlog_core::text::stress(b.stress_pa), th.figure),
            Span::raw(format!(
                " ({}) {} {}",
                interval(b.stress_low_pa, b.stress_high_pa, Unit::Megapascal),
                b.constant.symbol,
                format(b.constant.value, Unit::MegapascalRootMetre),
            )),
        ]));
    }
    out.push(kv(
        "Residual at origin",
        shardlog_core::text::stress(a.residual.at_origin_pa),
        th,
    ));
    out.push(Line::styled(
        format!("  {}", clean(&a.residual.basis)),
        th.muted,
    ));
    match &a.flaw {
        Some(fl) => {
            out.push(Line::styled(
                format!(
                    "Flaw: {} ({}), Y {} {}, {} {}",
                    clean(&fl.geometry_label),
                    clean(&fl.geometry_basis),
                    fmt_sig(fl.factor.y, 3),
                    clean(&fl.factor.governing_point),
                    fl.toughness.symbol,
                    format(fl.toughness.value, Unit::MegapascalRootMetre)
                ),
                th.muted,
            ));
            for r in &fl.ratios {
                let (mark, style) = if r.plausible {
                    ("✓ plausible", th.ok)
                } else {
                    ("✗ implausible", th.error)
                };
                out.push(Line::from(vec![
                    Span::styled("Mirror-to-flaw: ".to_string(), th.label),
                    Span::raw(format!(
                        "R({})/a = {} (expected ≈ {}) ",
                        r.boundary.key(),
                        fmt_sig(r.ratio, 3),
                        fmt_sig(r.expected, 3)
                    )),
                    Span::styled(mark, style),
                ]));
            }
            if let (Some(m), Some(q)) = (fl.measured_m, fl.measured_over_predicted) {
                out.push(kv(
                    "Measured flaw",
                    format!("{} = {} × predicted", length(m), fmt_sig(q, 3)),
                    th,
                ));
            }
        }
        None => out.push(kv("Flaw size", "— (no toughness)".into(), th)),
    }
    geometry_lines(a, per_geometry, th, width, &mut out);
    out
}

/// The branching distance predicted, the boundaries' consistency and the flaw size per
/// geometry.
fn geometry_lines(
    a: &Analysis,
    per_geometry: &[crate::app::bench::GeometryRow],
    th: &Theme,
    width: u16,
    out: &mut Vec<Line<'static>>,
) {
    if let Some(b) = &a.branching {
        let measured = b
            .measured_m
            .map(|m| format!(", measured {}", length(m)))
            .unwrap_or_default();
        out.push(kv(
            "Branching predicted",
            format!(
                "{} ({}){measured}",
                length(b.distance_m),
                interval(b.low_m, b.high_m, length_unit(b.distance_m))
            ),
            th,
        ));
    }
    if a.consistency.is_empty() {
        let why = if a.boundaries.len() > 1 {
            "not checked: a mirror that is not closed says nothing of the stress"
        } else {
            "one boundary only"
        };
        out.push(Line::styled(
            format!("Boundary consistency: {why}"),
            th.muted,
        ));
    }
    for c in &a.consistency {
        let (mark, style) = if c.agrees {
            ("✓ agree", th.ok)
        } else {
            ("✗ disagree", th.error)
        };
        out.push(Line::from(vec![
            Span::styled("Consistency: ".to_string(), th.label),
            Span::raw(format!(
                "R({})/R({}) {} vs {} ",
                c.outer.key(),
                c.inner.key(),
                fmt_sig(c.radius_ratio, 3),
                fmt_sig(c.expected_ratio, 3)
            )),
            Span::styled(mark, style),
        ]));
    }
    if !per_geometry.is_empty() {
        out.push(Line::styled(
            "Flaw size per geometry (net stress)",
            th.label,
        ));
        let lw = (width as usize).saturating_sub(22).clamp(10, 34);
        for g in per_geometry {
            out.push(Line::raw(format!(
                " {} Y {:<5} {}",
                widgets::fit_left(&clean(&g.label), lw),
                fmt_sig(g.y, 3),
                length(g.size_m)
            )));
        }
    }
}
