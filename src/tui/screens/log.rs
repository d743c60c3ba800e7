//! The incident log: a search/filter line, the table of visible rows, nothing more.

use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;
use ratatui::Frame;

use crate::app::App;
use crate::store::model::{LogRow, LookupKind, SortColumn};
use crate::tui::theme::Theme;
use crate::tui::widgets::{self, clean, fit, WindowTable};

/// A column of the log: header, width, which sort it shows, and the text of a row.
struct Col {
    header: &'static str,
    width: u16,
    sort: Option<SortColumn>,
    min_screen: u16,
}

const COLS: &[Col] = &[
    Col {
        header: "Reference",
        width: 14,
        sort: Some(SortColumn::Reference),
        min_screen: 0,
    },
    // the reference already carries the date found (BR-YYMMDD-…): narrow screens give
    // its room to the asset and position
    Col {
        header: "Found",
        width: 10,
        sort: Some(SortColumn::Found),
        min_screen: 100,
    },
    Col {
        header: "Asset / position",
        width: 0,
        sort: None,
        min_screen: 0,
    },
    Col {
        header: "Product",
        width: 10,
        sort: None,
        min_screen: 124,
    },
    Col {
        header: "Supplier",
        width: 10,
        sort: None,
        min_screen: 80,
    },
    Col {
        header: "Lot",
        width: 9,
        sort: None,
        min_screen: 110,
    },
    Col {
        header: "Status",
        width: 10,
        sort: Some(SortColumn::Status),
        min_screen: 0,
    },
    Col {
        header: "Cause",
        width: 10,
        sort: None,
        min_screen: 0,
    },
    Col {
        header: "Net σ",
        width: 9,
        sort: Some(SortColumn::Stress),
        min_screen: 0,
    },
    // on the fleet database only: the bench that owns the incident
    Col {
        header: "Bench",
        width: 6,
        sort: None,
        min_screen: 0,
    },
];

/// The columns in the order shown (the bench, on the fleet, next to the reference).
const ORDER: [usize; 10] = [0, BENCH_COL, 1, 2, 3, 4, 5, 6, 7, 8];
const BENCH_COL: usize = 9;

/// The widest a reference is shown (longer ones are cut with an ellipsis).
const MAX_REFERENCE_WIDTH: u16 = 26;

/// Status and cause get more room on wide screens.
fn col_width(i: usize, screen: u16) -> u16 {
    match i {
        6 | 7 if screen >= 100 => 13,
        BENCH_COL if screen >= 100 => 8,
        _ => COLS[i].width,
    }
}

/// The status label, or a short form of a built-in status when the label does not fit.
fn status_text(app: &App, code: &str, width: u16) -> String {
    let label = app.lists.label(LookupKind::Status, code);
    if unicode_width::UnicodeWidthStr::width(label.as_str()) <= width as usize {
        return label;
    }
    match code {
        "received" => "received".into(),
        "cause_assigned" => "assigned".into(),
        "claim_open" => "claim open".into(),
        _ => label,
    }
}

fn cell(app: &App, row: &LogRow, col: usize, screen: u16) -> String {
    let t = match col {
        0 => row.reference.clone(),
        1 if row.damaged.is_some() => "damaged".to_string(),
        1 => row.occurred.to_string(),
        2 => {
            let a = row.asset.clone().unwrap_or_default();
            if row.position.is_empty() {
                a
            } else if a.is_empty() {
                row.position.clone()
            } else {
                format!("{a} · {}", row.position)
            }
        }
        3 => row.product.clone().unwrap_or_default(),
        4 => row.supplier.clone().unwrap_or_default(),
        5 => row.lot.clone().unwrap_or_default(),
        6 => status_text(app, &row.status, col_width(6, screen)),
        7 => row
            .cause
            .as_deref()
            .map(|c| app.lists.label(LookupKind::CauseCategory, c))
            .unwrap_or_default(),
        8 => {
            let t = row
                .stress_mpa
                .map(|s| format!("{} MPa", shardlog_core::units::fmt_sig(s, 3)))
                .unwrap_or_else(|| "—".to_string());
            // right-aligned in its column
            let w = unicode_width::UnicodeWidthStr::width(t.as_str());
            format!("{}{t}", " ".repeat(9usize.saturating_sub(w)))
        }
        BENCH_COL => row.bench.clone().unwrap_or_default(),
        _ => String::new(),
    };
    clean(&t)
}

pub fn draw(app: &App, f: &mut Frame, body: Rect, th: &Theme) {
    if body.height == 0 {
        return;
    }
    let [top, table] = Layout::vertical([Constraint::Length(1), Constraint::Fill(1)]).areas(body);
    // the search line, or what the log shows
    let line = match &app.search {
        Some(s) => Line::from(vec![
            Span::styled(" / ", th.focus_label),
            Span::styled(format!("{}▏", clean(&s.text())), th.input),
            Span::styled("  Enter search · Esc cancel", th.muted),
        ]),
        None => {
            // " Filter: " and " (x clears)" around it; the values give way, never the dates
            let room = (top.width as usize).saturating_sub(20);
            let filt = app.log.filter_summary_within(&app.lists, room);
            if filt.is_empty() {
                let text = if app.on_fleet() {
                    " Every bench · / search · f filter · B bench · s sort · r review · ? help"
                } else {
                    " All incidents · / search · f filter · s sort · n new · r review · ? help"
                };
                Line::styled(text, th.muted)
            } else {
                Line::styled(format!(" Filter: {} (x clears)", clean(&filt)), th.warning)
            }
        }
    };
    widgets::para(vec![line]).render(top, f.buffer_mut());

    let cols: Vec<usize> = ORDER
        .into_iter()
        .filter(|&i| body.width >= COLS[i].min_screen)
        .filter(|&i| i != BENCH_COL || app.on_fleet())
        .collect();
    // a reference is shown whole: one with a bench code (BR-NORTH-260314-0007) or qualified
    // by its bench on the fleet (NORTH/BR-260314-0007) is wider than the plain 14 characters
    let reference_width = app
        .log
        .rows
        .iter()
        .map(|r| unicode_width::UnicodeWidthStr::width(r.reference.as_str()))
        .max()
        .map_or(COLS[0].width, |w| {
            (w as u16).clamp(COLS[0].width, MAX_REFERENCE_WIDTH)
        });
    let width_of = |i: usize| {
        if i == 0 {
            reference_width
        } else {
            col_width(i, body.width)
        }
    };
    let fixed: u16 =
        cols.iter().map(|&i| width_of(i)).sum::<u16>() + cols.len().saturating_sub(1) as u16;
    let fill = body.width.saturating_sub(fixed).max(6);
    let widths: Vec<u16> = cols
        .iter()
        .map(|&i| {
            if COLS[i].width == 0 {
                fill
            } else {
                width_of(i)
            }
        })
        .collect();
    let header: Vec<String> = cols
        .iter()
        .zip(&widths)
        .map(|(&i, &w)| {
            // with the Found column hidden, the reference (which carries the date) shows
            // the date sort
            let shown_sort = match app.log.sort.column {
                SortColumn::Found if !cols.contains(&1) => SortColumn::Reference,
                c => c,
            };
            let mark = match COLS[i].sort {
                Some(s) if s == shown_sort => {
                    if app.log.sort.descending {
                        " ▼"
                    } else {
                        " ▲"
                    }
                }
                _ => "",
            };
            fit(&format!("{}{mark}", COLS[i].header), w as usize)
        })
        .collect();
    if app.log.rows.is_empty() {
        let msg = if app.log.filter == Default::default() {
            if app.on_fleet() {
                "No incidents on the fleet yet: they arrive when the benches sync."
            } else {
                "No incidents yet. Press n to log a new breakage."
            }
        } else {
            "Nothing matches. x clears the filters and search."
        };
        widgets::para(vec![
            Line::raw(""),
            Line::styled(format!(" {msg}"), th.muted),
        ])
        .render(table, f.buffer_mut());
        return;
    }
    let rows: Vec<Vec<String>> = app
        .log
        .rows
        .iter()
        .map(|r| {
            cols.iter()
                .zip(&widths)
                .map(|(&i, &w)| fit(&cell(app, r, i, body.width), w as usize))
                .collect()
        })
        .collect();
    let header_refs: Vec<&str> = header.iter().map(String::as_str).collect();
    WindowTable {
        header: header_refs,
        widths: widths.iter().map(|&w| Constraint::Length(w)).collect(),
        rows,
        selected: Some(app.log.selected),
        header_style: th.header,
        selected_style: th.selected,
    }
    .render(table, f.buffer_mut());
}
