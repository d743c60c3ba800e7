//! One incident: a bar of sections, the current section below it.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;
use ratatui::Frame;

use crate::app::incident::{IncidentState, Lists, Section};
use crate::app::App;
use crate::store::model::{Incident, LookupKind};
use crate::tui::theme::Theme;
use crate::tui::widgets::{self, clean};
use shardlog_core::units::{format, Unit};

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    let Some(state) = &app.incident else {
        return;
    };
    if body.height < 2 {
        return;
    }
    let [tabs, head, content] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Length(1),
        Constraint::Fill(1),
    ])
    .areas(body);
    let mut spans = Vec::new();
    for s in Section::ALL {
        let style = if s == state.section {
            th.selected
        } else {
            th.label
        };
        spans.push(Span::styled(format!(" {} ", s.title()), style));
        spans.push(Span::raw(" "));
    }
    widgets::para(vec![Line::from(spans)]).render(tabs, f.buffer_mut());
    let inc = &state.incident;
    let title = format!(
        " {} · {} · {}",
        inc.reference,
        clean(inc.asset.as_deref().unwrap_or("no asset")),
        clean(&inc.position)
    );
    f.buffer_mut().set_stringn(
        head.x,
        head.y,
        widgets::fit(&title, head.width as usize),
        head.width as usize,
        th.header,
    );
    let lines = hang_values(section_lines(app, state, th), content.width);
    let max = widgets::wrapped_rows(&lines, content.width).saturating_sub(content.height);
    state.scroll_max.set(max);
    widgets::para(lines)
        .scroll((state.scroll.min(max), 0))
        .render(content, f.buffer_mut());
}

fn kv(k: &str, v: impl Into<String>, th: &Theme) -> Line<'static> {
    let v: String = v.into();
    let v = if v.trim().is_empty() {
        "—".to_string()
    } else {
        clean(&v)
    };
    Line::from(vec![
        Span::styled(
            format!(" {}", widgets::fit_left(k, LABEL_CELLS - 1)),
            th.label,
        ),
        Span::styled(v, th.input),
    ])
}

/// The width of a label column made by `kv` (a space and 20 cells).
const LABEL_CELLS: usize = 21;

/// Wrap the value of each label-and-value line under the value column, so a long value
/// (a description, a note) reads as one block beside its label instead of running back
/// under the labels.
fn hang_values(lines: Vec<Line<'static>>, width: u16) -> Vec<Line<'static>> {
    let room = (width as usize).saturating_sub(LABEL_CELLS);
    if room < 10 {
        return lines;
    }
    let mut out = Vec::with_capacity(lines.len());
    for line in lines {
        let is_pair = line.spans.len() == 2
            && widgets::width(&line.spans[0].content) == LABEL_CELLS
            && widgets::width(&line.spans[1].content) > room;
        if !is_pair {
            out.push(line);
            continue;
        }
        let (label, value) = (line.spans[0].clone(), line.spans[1].clone());
        for (i, piece) in widgets::wrap(&value.content, room).into_iter().enumerate() {
            let head = if i == 0 {
                label.clone()
            } else {
                Span::raw(" ".repeat(LABEL_CELLS))
            };
            out.push(Line::from(vec![head, Span::styled(piece, value.style)]));
        }
    }
    out
}

fn opt(v: &Option<String>) -> String {
    v.clone().unwrap_or_default()
}

fn length(m: Option<f64>) -> String {
    m.map(|m| format(m, Unit::Millimetre)).unwrap_or_default()
}

fn section_lines(app: &App, state: &IncidentState, th: &Theme) -> Vec<Line<'static>> {
    let inc = &state.incident;
    let l = &app.lists;
    let mut out = Vec::new();
    match state.section {
        Section::Intake => {
            out.push(kv("Asset", opt(&inc.asset), th));
            out.push(kv("Position", inc.position.clone(), th));
            out.push(kv("Site", opt(&inc.site), th));
            out.push(kv("Found on", inc.found_on.to_string(), th));
            out.push(kv(
                "Broken on",
                inc.broken_on.map(|d| d.to_string()).unwrap_or_default(),
                th,
            ));
            out.push(kv(
                "Temperature",
                inc.environment
                    .temperature_c
                    .map(|t| format!("{t} °C"))
                    .unwrap_or_default(),
                th,
            ));
            out.push(kv("Sun", inc.environment.sun.clone(), th));
            out.push(kv("Weather", inc.environment.weather.clone(), th));
            out.push(kv("Reporter", inc.reporter.clone(), th));
            out.push(kv("How found", inc.how_found.clone(), th));
            out.push(kv("Description", inc.description.clone(), th));
            out.push(kv("Status", l.label(LookupKind::Status, &inc.status), th));
        }
        Section::Glass => glass_lines(inc, l, th, &mut out),
        Section::Pattern => {
            let p = &inc.pattern;
            out.push(kv(
                "Origin location",
                p.origin_location
                    .as_deref()
                    .map(|c| l.label(LookupKind::OriginLocation, c))
                    .unwrap_or_default(),
                th,
            ));
            out.push(kv("Tension face", p.tension_face.clone(), th));
            out.push(kv(
                "Crack count",
                p.crack_count.map(|c| c.to_string()).unwrap_or_default(),
                th,
            ));
            out.push(kv(
                "Branching",
                match p.branching {
                    Some(true) => "yes",
                    Some(false) => "no",
                    None => "",
                },
                th,
            ));
            out.push(kv(
                "Fragments (50×50 mm)",
                p.fragment_count.map(|c| c.to_string()).unwrap_or_default(),
                th,
            ));
            fragmentation_lines(inc, l, th, &mut out);
        }
        Section::Examination => examination_lines(app, inc, th, &mut out),
        Section::Cause => {
            match &inc.cause {
                Some(c) => {
                    out.push(kv(
                        "Cause",
                        l.label(LookupKind::CauseCategory, &c.category),
                        th,
                    ));
                    out.push(kv(
                        "Confidence",
                        l.label(LookupKind::Confidence, &c.confidence),
                        th,
                    ));
                    out.push(kv(
                        "Responsibility",
                        l.label(LookupKind::Responsibility, &c.responsibility),
                        th,
                    ));
                    out.push(kv("Contributing", c.factors.join(", "), th));
                    out.push(kv("Note", c.note.clone(), th));
                }
                None => out.push(Line::styled(
                    " No cause assigned yet. Press e to set cause, confidence, responsibility \
                     and status.",
                    th.muted,
                )),
            }
            out.push(kv(
                "Case status",
                l.label(LookupKind::Status, &inc.status),
                th,
            ));
        }
        Section::Evidence => evidence_lines(inc, l, th, &mut out),
        Section::History => history_lines(state, th, &mut out),
    }
    out
}

/// The lines of the history section.
fn history_lines(state: &IncidentState, th: &Theme, out: &mut Vec<Line<'static>>) {
    if let (true, Some(owner)) = (state.history.is_empty(), &state.owner) {
        // the fleet holds each record as its bench pushed it, not the bench's audit trail
        out.push(Line::styled(" History".to_string(), th.header));
        out.push(Line::raw(format!(
            " The history of {} is kept at its owning bench {}:",
            clean(&state.incident.reference),
            clean(owner)
        )));
        out.push(Line::raw(format!(
            " open that bench's file to see it or restore a revision (here: revision {}).",
            state.incident.revision
        )));
        return;
    }
    out.push(Line::styled(
        format!(
            " History, newest first ({} {})",
            state.history.len(),
            if state.history.len() == 1 {
                "entry"
            } else {
                "entries"
            }
        ),
        th.header,
    ));
    for (i, h) in state.history.iter().enumerate() {
        let mark = if i == state.history_cursor {
            "▸"
        } else {
            " "
        };
        // a new record's every field is "changed": say what happened instead
        let changed = if h.changed.is_empty() || h.op != "update" {
            String::new()
        } else {
            format!(" · {}", h.changed.join(", "))
        };
        let style = if i == state.history_cursor {
            th.focus_label
        } else {
            ratatui::style::Style::default()
        };
        out.push(Line::styled(
            format!(
                "{mark}#{} {} · {} · {}{changed}",
                h.seq,
                h.at.format("%Y-%m-%d %H:%M:%S"),
                clean(&h.actor),
                match h.op.as_str() {
                    "insert" => "created",
                    "update" => "changed",
                    "delete" => "deleted",
                    other => other,
                },
            ),
            style,
        ));
        out.push(Line::styled(
            format!("   hash {}", h.hash.chars().take(32).collect::<String>()),
            th.muted,
        ));
    }
}

/// The lines of the evidence section.
fn evidence_lines(inc: &Incident, l: &Lists, th: &Theme, out: &mut Vec<Line<'static>>) {
    out.push(Line::styled(
        format!(
            " Attachments ({}) · a attaches a file",
            inc.attachments.len()
        ),
        th.header,
    ));
    for a in &inc.attachments {
        out.push(Line::raw(format!(
            " {} · {} · {} bytes · {}",
            clean(&a.file_name),
            a.media_type,
            a.size_bytes,
            a.added_at.format("%Y-%m-%d %H:%M")
        )));
        out.push(Line::styled(format!("   sha256 {}", a.sha256), th.muted));
        if !a.caption.is_empty() {
            out.push(Line::styled(format!("   {}", clean(&a.caption)), th.muted));
        }
    }
    out.push(Line::raw(""));
    out.push(Line::styled(
        format!(" Custody log ({}) · c adds an entry", inc.custody.len()),
        th.header,
    ));
    for c in &inc.custody {
        out.push(Line::raw(format!(
            " {} · {} · {} · {}{}",
            c.at.format("%Y-%m-%d %H:%M"),
            l.label(LookupKind::CustodyAction, &c.action),
            clean(&c.who),
            clean(&c.location),
            if c.note.is_empty() {
                String::new()
            } else {
                format!(" · {}", clean(&c.note))
            }
        )));
    }
}

/// The lines of the glass section.
fn glass_lines(inc: &Incident, l: &Lists, th: &Theme, out: &mut Vec<Line<'static>>) {
    let g = &inc.glass;
    out.push(kv("Supplier", opt(&g.supplier), th));
    out.push(kv("Product", opt(&g.product), th));
    out.push(kv("Lot", opt(&g.lot), th));
    out.push(kv("Make-up", l.label(LookupKind::Makeup, &g.makeup), th));
    out.push(kv(
        "Size",
        match (g.width_m, g.height_m) {
            (Some(w), Some(h)) => format!(
                "{} × {}",
                format(w, Unit::Millimetre),
                format(h, Unit::Millimetre)
            ),
            _ => String::new(),
        },
        th,
    ));
    out.push(kv(
        "Installed on",
        inc.installed_on.map(|d| d.to_string()).unwrap_or_default(),
        th,
    ));
    let key = (g.supplier.clone(), g.product.clone(), g.lot.clone());
    let soak = match key {
        (Some(s), Some(p), Some(lot)) => l.lot_heat_soak.get(&(s, p, lot)),
        _ => None,
    };
    out.push(kv(
        "Lot heat-soak",
        match soak {
            Some(h) if h.soaked => format!(
                "tested (EN 14179-1){}{}",
                h.on.map(|d| format!(" {d}")).unwrap_or_default(),
                if h.reference.is_empty() {
                    String::new()
                } else {
                    format!(", cert. {}", clean(&h.reference))
                }
            ),
            Some(_) => "not tested".to_string(),
            None => String::new(),
        },
        th,
    ));
    if g.plies.is_empty() {
        out.push(kv("Plies", "none recorded", th));
    }
    for (i, p) in g.plies.iter().enumerate() {
        out.push(Line::styled(format!(" Ply {}", i + 1), th.header));
        out.push(kv(
            "  Material",
            p.material
                .as_deref()
                .map(|m| l.label(LookupKind::Material, m))
                .unwrap_or_default(),
            th,
        ));
        out.push(kv(
            "  Temper class",
            p.temper
                .as_deref()
                .map(|m| l.label(LookupKind::TemperClass, m))
                .unwrap_or_default(),
            th,
        ));
        out.push(kv("  Thickness", length(p.thickness_m), th));
        out.push(kv("  Coating", p.coating.clone(), th));
        out.push(kv("  Edge finish", p.edge_finish.clone(), th));
    }
}

fn examination_lines(app: &App, inc: &Incident, th: &Theme, out: &mut Vec<Line<'static>>) {
    let l = &app.lists;
    if inc.examinations.is_empty() {
        out.push(Line::styled(
            " No examination yet. b opens the bench calculator for this incident \
             (readings and results are saved here with Ctrl-S); e records origin type, analyst, flaw.",
            th.muted,
        ));
        return;
    }
    for (i, e) in inc.examinations.iter().enumerate() {
        out.push(Line::styled(
            format!(
                " Examination {} · {} · {}",
                i + 1,
                e.examined_on.map(|d| d.to_string()).unwrap_or_default(),
                clean(&e.analyst)
            ),
            th.header,
        ));
        out.push(kv(
            "Origin type",
            e.origin_type
                .as_deref()
                .map(|c| l.label(LookupKind::OriginType, c))
                .unwrap_or_default(),
            th,
        ));
        for code in ["mirror_mist", "mist_hackle", "branching"] {
            let r: Vec<String> = e
                .readings
                .iter()
                .filter(|r| r.boundary == code)
                .map(|r| match &r.viewing {
                    Some(v) => format!(
                        "{} ({})",
                        r.radius.display(),
                        l.label(LookupKind::ViewingMode, v)
                    ),
                    None => r.radius.display(),
                })
                .collect();
            if !r.is_empty() {
                out.push(kv(
                    &format!("R {}", l.label(LookupKind::Boundary, code)),
                    r.join(", "),
                    th,
                ));
            }
        }
        if let Some(fl) = &e.flaw {
            out.push(kv(
                "Flaw measured",
                format!(
                    "depth {} width {} {}",
                    fl.depth.as_ref().map(|d| d.display()).unwrap_or("—".into()),
                    fl.width.as_ref().map(|d| d.display()).unwrap_or("—".into()),
                    clean(&fl.shape)
                ),
                th,
            ));
        }
        if let Some(r) = &e.result {
            let mpa = |v: Option<f64>| v.map(|v| format(v, Unit::Megapascal)).unwrap_or_default();
            out.push(kv(
                "Net stress",
                format!(
                    "{} ({} – {})",
                    mpa(r.stress_pa),
                    mpa(r.stress_low_pa),
                    mpa(r.stress_high_pa)
                ),
                th,
            ));
            out.push(kv("Residual at origin", mpa(r.residual_pa), th));
            out.push(kv("Applied stress", mpa(r.applied_stress_pa), th));
            out.push(kv(
                "Flaw size",
                r.flaw_size_m
                    .map(|a| format(a, Unit::Micrometre))
                    .unwrap_or_default(),
                th,
            ));
            out.push(kv(
                "Computed",
                format!(
                    "{} by {}",
                    r.computed_at.format("%Y-%m-%d %H:%M"),
                    r.code_version
                ),
                th,
            ));
        }
        if !e.notes.is_empty() {
            out.push(kv("Notes", e.notes.clone(), th));
        }
    }
}

/// The fragmentation check of a thermally toughened pane: verdict, count and the minimum
/// used, then where the minimum comes from.
fn fragmentation_lines(inc: &Incident, l: &Lists, th: &Theme, out: &mut Vec<Line<'static>>) {
    let Some(c) = crate::store::practice::fragmentation_check(inc, &l.fragmentation) else {
        return;
    };
    out.push(kv("Fragmentation", clean(&c.summary()), th));
    if let Some(row) = c.row() {
        out.push(kv("Minimum from", clean(&row.provenance), th));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_long_value_wraps_under_its_own_column() {
        let th = crate::tui::theme::theme();
        let long = "Origin at the clamping point of the frame; fixing bolt found over-tightened.";
        let lines = hang_values(vec![kv("Description", long, th)], 60);
        let text: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
        assert!(text.len() >= 2, "{text:?}");
        assert!(text[0].starts_with(" Description"), "{text:?}");
        for line in &text[1..] {
            assert!(line.starts_with(&" ".repeat(LABEL_CELLS)), "{text:?}");
            assert!(widgets::width(line) <= 60, "{text:?}");
        }
        let values: Vec<&str> = text.iter().map(|l| l[LABEL_CELLS..].trim()).collect();
        assert_eq!(values.join(" "), long);
        // a short value is left as it was
        let short = hang_values(vec![kv("Site", "TVL-ASH", th)], 60);
        assert_eq!(short.len(), 1);
    }
}
