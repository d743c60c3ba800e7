//! Markdown renderer, for pasting into tickets: headings, pipe tables, charts as their data
//! tables, photos listed by name and hash. User text is escaped so that it cannot become
//! markup (no raw HTML, no links, no emphasis, no table breaks).

use std::fmt::Write as _;

use super::doc::{Block, Document};

/// Escape text for Markdown inline content. `<`, `>` and `&` become entities so that a
/// renderer that allows raw HTML shows them as text.
pub fn esc(s: &str) -> String {
    escape(s, true)
}

/// `block`: also escape what would start a heading, list or rule at the start of a line
/// (not needed inside a table cell or after a list marker of ours).
fn escape(s: &str, block: bool) -> String {
    let mut o = String::with_capacity(s.len() + 8);
    for (i, line) in s.split('\n').enumerate() {
        if i > 0 {
            o.push('\n');
        }
        let mut at_start = block;
        let mut digits = false;
        let mut chars = line.chars().peekable();
        while let Some(c) = chars.next() {
            let next_blank = chars.peek().is_none_or(|n| *n == ' ');
            match c {
                '&' => o.push_str("&amp;"),
                '<' => o.push_str("&lt;"),
                '>' => o.push_str("&gt;"),
                '\\' | '`' | '*' | '_' | '[' | ']' | '|' | '~' => {
                    o.push('\\');
                    o.push(c);
                }
                // block markers only mean something at the start of a line
                '#' | '-' | '+' | '=' if at_start => {
                    o.push('\\');
                    o.push(c);
                }
                // "12. " would start an ordered list
                '.' | ')' if digits && next_blank => {
                    o.push('\\');
                    o.push(c);
                }
                '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => {}
                c if c.is_control() => {}
                c => o.push(c),
            }
            digits = (at_start || digits) && c.is_ascii_digit();
            at_start = at_start && c == ' ';
        }
    }
    o
}

/// A table cell: escaped, on one line.
fn cell(s: &str) -> String {
    escape(&s.replace(['\n', '\r'], " "), false)
}

fn para(s: &str) -> String {
    // keep line breaks as hard breaks (two trailing spaces would be lost when pasted)
    esc(s)
        .split('\n')
        .map(|l| l.trim_end().to_string())
        .collect::<Vec<_>>()
        .join("<br>\n")
        .replace("<br>\n<br>\n", "\n\n")
}

fn table(o: &mut String, header: &[String], rows: &[Vec<String>], numeric: &dyn Fn(usize) -> bool) {
    let header: Vec<String> = header
        .iter()
        .map(|h| if h.is_empty() { " ".into() } else { cell(h) })
        .collect();
    let _ = writeln!(o, "| {} |", header.join(" | "));
    let sep: Vec<&str> = (0..header.len())
        .map(|i| if numeric(i) { "---:" } else { "---" })
        .collect();
    let _ = writeln!(o, "| {} |", sep.join(" | "));
    for r in rows {
        let cells: Vec<String> = r.iter().map(|c| cell(c)).collect();
        let _ = writeln!(o, "| {} |", cells.join(" | "));
    }
    o.push('\n');
}

pub fn render(doc: &Document) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "# {} {}\n", esc(&doc.title), esc(&doc.reference));
    if !doc.subtitle.is_empty() {
        let _ = writeln!(o, "{}\n", para(&doc.subtitle));
    }
    for b in &doc.blocks {
        match b {
            Block::Heading(t) => {
                let _ = writeln!(o, "## {}\n", cell(t));
            }
            Block::Subheading(t) => {
                let _ = writeln!(o, "### {}\n", cell(t));
            }
            Block::Paragraph(t) => {
                let _ = writeln!(o, "{}\n", para(t));
            }
            Block::Note(t) => {
                let _ = writeln!(o, "*{}*\n", para(t));
            }
            Block::KeyValue(pairs) => {
                for (k, v) in pairs {
                    let _ = writeln!(o, "- **{}:** {}", cell(k), cell(v));
                }
                o.push('\n');
            }
            Block::Table(t) => table(&mut o, &t.header, &t.rows, &|i| t.is_numeric(i)),
            Block::Figure { chart, caption } => {
                let _ = writeln!(o, "**Figure:** {}\n", cell(caption));
                let (h, rows) = chart.data_table();
                table(&mut o, &h, &rows, &|i| i > 0);
            }
            Block::Picture(p) => {
                let how = if p.is_embeddable() {
                    "photo"
                } else {
                    "attachment, not an image"
                };
                let _ = writeln!(
                    o,
                    "- {} ({how}): {} — SHA-256 `{}`\n",
                    cell(&p.name),
                    cell(&p.caption),
                    p.sha256
                        .chars()
                        .filter(|c| c.is_ascii_hexdigit())
                        .collect::<String>()
                );
            }
            Block::Boxed { title, lines } => {
                let _ = writeln!(o, "> **{}**", cell(title));
                for l in lines {
                    let _ = writeln!(o, ">\n> {}", cell(l));
                }
                o.push('\n');
            }
        }
    }
    if !doc.proof.is_empty() {
        o.push_str("---\n\n");
        for (k, v) in &doc.proof {
            let _ = writeln!(o, "- **{}:** `{}`", cell(k), v.replace('`', ""));
        }
        o.push('\n');
    }
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn user_text_cannot_become_markup() {
        assert_eq!(esc("[x](http://y)"), "\\[x\\](http://y)");
        assert_eq!(
            esc("# not a heading\n- not a list\n12. no"),
            "\\# not a heading\n\\- not a list\n12\\. no"
        );
        assert_eq!(esc("cross-checks 1.5"), "cross-checks 1.5");
        assert_eq!(esc("25.8 °C"), "25.8 °C");
        assert_eq!(cell("- 3.5 MPa"), "- 3.5 MPa");
        assert_eq!(esc("*b* `c`"), "\\*b\\* \\`c\\`");
        assert_eq!(esc("a|b"), "a\\|b");
        assert_eq!(esc("<i>"), "&lt;i&gt;");
    }
}
