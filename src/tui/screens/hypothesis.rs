//! The load hypothesis beside the bench results: its stress next to the measured applied
//! stress with the verdict, and a K(a) chart (log crack size) with the K_Ic line and the
//! measured flaw marked. Figures come from `app::hypothesis::Check` (loads::evaluate,
//! loads::verdict::judge, loads::critical::curve); nothing is computed here.

use ratatui::layout::Rect;
use ratatui::style::Style;
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Chart, Dataset, GraphType, Widget};

use crate::app::hypothesis::{Check, KChart, KINDS};
use crate::tui::theme::Theme;
use crate::tui::widgets::clean;
use shardlog_core::loads::verdict::{Finding, SoundPart};
use shardlog_core::units::{fmt_sig, format, Unit};

fn length(m: f64) -> String {
    if m.abs() < 1e-3 {
        format(m, Unit::Micrometre)
    } else {
        format(m, Unit::Millimetre)
    }
}

fn kind_label(kind: &str) -> &'static str {
    KINDS
        .iter()
        .find(|(c, _)| *c == kind)
        .map(|(_, l)| *l)
        .unwrap_or("hypothesis")
}

fn finding_style(f: Finding, th: &Theme) -> Style {
    match f {
        Finding::Consistent => th.ok,
        _ => th.warning,
    }
}

/// The hypothesis' figure line: its stress (or force) beside the measured applied stress.
fn figures(c: &Check, th: &Theme) -> Line<'static> {
    let mut spans = vec![Span::styled("Hypothesis ", th.label)];
    match (c.outcome.stress, c.outcome.force) {
        (Some(s), _) => spans.push(Span::styled(
            format!("σ {}", shardlog_core::text::stress(s)),
            th.figure,
        )),
        (None, Some(fo)) => spans.push(Span::styled(
            format!("F {}", format(fo, Unit::Newton)),
            th.figure,
        )),
        (None, None) => spans.push(Span::styled("—", th.muted)),
    }
    if let Some(m) = &c.measured {
        spans.push(Span::styled(" · measured ", th.label));
        spans.push(Span::styled(
            format!(
                "{} ({} – {} MPa)",
                shardlog_core::text::stress(m.stress),
                fmt_sig(m.low / 1e6, 3),
                fmt_sig(m.high / 1e6, 3)
            ),
            th.figure,
        ));
    }
    Line::from(spans)
}

/// A short verdict line for the panel.
fn short_verdict(c: &Check, th: &Theme) -> Line<'static> {
    match &c.verdict {
        Some(Ok(v)) => {
            let sound = match (v.sound_part, v.strength_ratio) {
                (Some(SoundPart::WouldBreak), Some(r)) => {
                    format!(" · breaks a sound pane (×{})", fmt_sig(r, 3))
                }
                (Some(SoundPart::WouldSurvive), Some(r)) => {
                    format!(" · a sound pane survives (×{})", fmt_sig(r, 3))
                }
                _ => String::new(),
            };
            Line::from(vec![
                Span::styled("Verdict: ", th.label),
                Span::styled(
                    format!(
                        "{} ×{} of measured{sound}",
                        v.finding.label(),
                        fmt_sig(v.ratio, 3)
                    ),
                    finding_style(v.finding, th),
                ),
            ])
        }
        Some(Err(e)) => Line::styled(format!("Verdict: ✗ {}", clean(e)), th.error),
        None => Line::styled("No verdict: a force only → try patch load", th.muted),
    }
}

/// The hypothesis in full for the results pane (also what a narrow window shows instead of
/// the panel).
pub fn detail_lines(h: &Result<Check, String>, th: &Theme) -> Vec<Line<'static>> {
    let c = match h {
        Err(e) => {
            return vec![Line::styled(
                format!("Load hypothesis: ✗ {}", clean(e)),
                th.error,
            )]
        }
        Ok(c) => c,
    };
    let mut v = vec![
        Line::from(vec![
            Span::styled(
                format!("Load hypothesis ({}): ", kind_label(c.kind)),
                th.label,
            ),
            Span::styled(clean(&c.summary), th.figure),
        ]),
        figures(c, th),
    ];
    let mut extra = Vec::new();
    if let (Some(_), Some(fo)) = (c.outcome.stress, c.outcome.force) {
        extra.push(format!("force {}", format(fo, Unit::Newton)));
    }
    if let Some(d) = c.outcome.deflection {
        extra.push(format!("deflection {}", format(d, Unit::Millimetre)));
    }
    if !extra.is_empty() {
        v.push(Line::styled(format!("  {}", extra.join(", ")), th.muted));
    }
    match &c.verdict {
        Some(Ok(vd)) => v.push(Line::styled(
            format!("  {}", clean(&vd.explanation)),
            finding_style(vd.finding, th),
        )),
        Some(Err(e)) => v.push(Line::styled(format!("  ✗ {}", clean(e)), th.error)),
        None => v.push(Line::styled(
            "  no verdict: the impulse model gives a force only; pick \"plate under a central \
             patch load\" (F2) and this force carries over as its patch load",
            th.muted,
        )),
    }
    for w in &c.outcome.warnings {
        v.push(Line::styled(
            format!("  ! {}", clean(&w.message)),
            th.warning,
        ));
    }
    if let Ok(k) = &c.chart {
        v.push(Line::styled(
            format!(
                "  K(a): net σ {} at the origin reaches K_Ic {} at a = {} (Y {})",
                shardlog_core::text::stress(k.hypothesis_net_pa),
                format(k.k_ic, Unit::MegapascalRootMetre),
                length(k.curve.critical_size),
                fmt_sig(k.y, 3)
            ),
            th.muted,
        ));
    }
    v.push(Line::styled(
        format!("  method: {}", clean(c.outcome.method)),
        th.muted,
    ));
    v
}

/// Rows the panel wants at least (text and a useful chart).
pub const PANEL_MIN_ROWS: u16 = 11;

/// The chart's glyphs, one per curve or mark, so that it reads without colour (NO_COLOR):
/// the hypothesis' K(a) in braille dots, the measured stress' K(a) in bullets, the K_Ic line
/// dashed, the measured flaw a dotted vertical line, the mirror-predicted flaw a diamond.
pub const GLYPH_HYPOTHESIS: char = '⠤';
pub const GLYPH_MEASURED: char = '•';
pub const GLYPH_TOUGHNESS: char = '┄';
pub const GLYPH_FLAW: char = '┆';
pub const GLYPH_MIRROR: char = '◆';

/// Draw the panel's inside: the figures, the verdict, the chart when there is room.
pub fn draw_panel(
    buf: &mut ratatui::buffer::Buffer,
    area: Rect,
    h: &Result<Check, String>,
    th: &Theme,
) {
    if area.width < 4 || area.height == 0 {
        return;
    }
    let text: Vec<Line<'static>> = match h {
        Err(e) => vec![Line::styled(format!("✗ {}", clean(e)), th.error)],
        Ok(c) => {
            let mut spans = Vec::new();
            match (c.outcome.stress, c.outcome.force) {
                (Some(s), _) => spans.push(Span::styled(
                    format!("σ {}", shardlog_core::text::stress(s)),
                    th.figure,
                )),
                (None, Some(fo)) => spans.push(Span::styled(
                    format!("F {}", format(fo, Unit::Newton)),
                    th.figure,
                )),
                (None, None) => spans.push(Span::styled("—", th.muted)),
            }
            spans.push(Span::styled(" hypothesis", th.label));
            if let Some(m) = &c.measured {
                spans.push(Span::styled(" · ", th.label));
                spans.push(Span::styled(
                    shardlog_core::text::stress(m.stress),
                    th.figure,
                ));
                spans.push(Span::styled(" measured", th.label));
            }
            let mut t = vec![Line::from(spans), short_verdict(c, th)];
            match &c.chart {
                Ok(k) => {
                    let mut l = vec![
                        Span::styled("K/MPa·√m ", th.label),
                        Span::styled(format!("{GLYPH_HYPOTHESIS}hyp "), th.figure),
                        Span::styled(format!("{GLYPH_MEASURED}meas "), th.muted),
                        Span::styled(format!("{GLYPH_TOUGHNESS}K_Ic "), th.error),
                    ];
                    if k.measured_flaw_m.is_some() {
                        l.push(Span::styled(format!("{GLYPH_FLAW}flaw "), th.warning));
                    }
                    l.push(Span::styled(format!("{GLYPH_MIRROR}mirror"), th.ok));
                    t.push(Line::from(l));
                }
                Err(e) => t.push(Line::styled(format!("K(a): {}", clean(e)), th.muted)),
            }
            t
        }
    };
    let text = crate::tui::widgets::keep_figures_whole(text);
    let rows = crate::tui::widgets::wrapped_rows(&text, area.width).min(area.height);
    let text_area = Rect {
        height: rows,
        ..area
    };
    crate::tui::widgets::para(text).render(text_area, buf);
    crate::tui::widgets::spaces_for_no_breaks(buf, text_area);
    let chart_area = Rect {
        y: area.y + rows,
        height: area.height - rows,
        ..area
    };
    if let Ok(Check { chart: Ok(k), .. }) = h {
        if chart_area.height >= 6 && chart_area.width >= 30 {
            draw_chart(buf, chart_area, k, th);
        }
    }
}

fn lg(a_m: f64) -> f64 {
    (a_m * 1e6).max(1e-12).log10()
}

fn size_label(log_um: f64) -> String {
    length(10f64.powf(log_um) * 1e-6)
}

/// K(a) on a log crack-size axis: the hypothesis curve, the measured-stress curve, the K_Ic
/// line, the measured flaw (vertical line) and the mirror-predicted flaw (a point on K_Ic).
pub fn draw_chart(buf: &mut ratatui::buffer::Buffer, area: Rect, k: &KChart, th: &Theme) {
    let (Some(first), Some(last)) = (k.curve.points.first(), k.curve.points.last()) else {
        return;
    };
    let x0 = lg(first.flaw_size);
    let x1 = lg(last.flaw_size);
    if !x0.is_finite() || !x1.is_finite() || x1 <= x0 || !k.k_ic.is_finite() || k.k_ic <= 0.0 {
        return;
    }
    let kic = k.k_ic / 1e6;
    let ymax = 2.0 * kic;
    let hyp: Vec<(f64, f64)> = k
        .curve
        .points
        .iter()
        .map(|p| (lg(p.flaw_size), (p.stress_intensity / 1e6).min(ymax * 1.5)))
        .collect();
    let meas: Vec<(f64, f64)> = k
        .measured_curve
        .iter()
        .map(|p| (lg(p.flaw_size), (p.stress_intensity / 1e6).min(ymax * 1.5)))
        .collect();
    let sets = vec![
        Dataset::default()
            .marker(Marker::Dot)
            .graph_type(GraphType::Scatter)
            .style(th.muted)
            .data(&meas),
        Dataset::default()
            .marker(Marker::Braille)
            .graph_type(GraphType::Line)
            .style(th.figure)
            .data(&hyp),
    ];
    let xm = (x0 + x1) / 2.0;
    let chart = Chart::new(sets)
        .x_axis(
            Axis::default()
                .bounds([x0, x1])
                .style(th.muted)
                .labels(vec![size_label(x0), size_label(xm), size_label(x1)]),
        )
        .y_axis(
            Axis::default()
                .bounds([0.0, ymax])
                .style(th.muted)
                .labels(vec!["0".to_string(), fmt_sig(kic, 2), fmt_sig(ymax, 2)]),
        )
        .legend_position(None);
    chart.render(area, buf);
    let Some(plot) = plot_area(buf, area) else {
        return;
    };
    let to_col = |x: f64| {
        let f = ((x - x0) / (x1 - x0)).clamp(0.0, 1.0);
        plot.x + (f * f64::from(plot.width.saturating_sub(1))).round() as u16
    };
    let to_row = |y: f64| {
        let f = (y / ymax).clamp(0.0, 1.0);
        // as the axis places its labels: the middle label of an even span sits low
        plot.y + plot.height.saturating_sub(1)
            - (f * f64::from(plot.height.saturating_sub(1))).floor() as u16
    };
    let kic_row = to_row(kic);
    for col in plot.x..plot.x + plot.width {
        if buf[(col, kic_row)].symbol() == " " {
            buf[(col, kic_row)]
                .set_char(GLYPH_TOUGHNESS)
                .set_style(th.error);
        }
    }
    if let Some(m) = k.measured_flaw_m {
        let col = to_col(lg(m));
        for row in plot.y..plot.y + plot.height {
            buf[(col, row)].set_char(GLYPH_FLAW).set_style(th.warning);
        }
    }
    buf[(to_col(lg(k.predicted_flaw_m)), kic_row)]
        .set_char(GLYPH_MIRROR)
        .set_style(th.ok);
}

/// The chart's plotting area inside `area`: right of the y axis, above the x axis (found by
/// the axes' corner that the chart drew).
pub fn plot_area(buf: &ratatui::buffer::Buffer, area: Rect) -> Option<Rect> {
    for row in (area.y..area.y + area.height).rev() {
        for col in area.x..area.x + area.width {
            if buf[(col, row)].symbol() == "└" {
                let width = (area.x + area.width).checked_sub(col + 1)?;
                let height = row.checked_sub(area.y)?;
                return (width > 0 && height > 0).then_some(Rect {
                    x: col + 1,
                    y: area.y,
                    width,
                    height,
                });
            }
        }
    }
    None
}
