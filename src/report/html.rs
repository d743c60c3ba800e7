//! HTML renderer: one self-contained file. Inline CSS with print rules, photos as data URIs,
//! charts as inline SVG; no scripts, no outside fetches; every piece of text escaped.

use std::fmt::Write as _;

use super::chart::{Anchor, Prim};
use super::doc::{Block, Document, Paper};
use super::image::{base64, Picture};

/// Escape text for HTML element content and attribute values.
pub fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            // bidi overrides and other controls would reorder or hide surrounding text
            '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => {}
            '\n' | '\t' => o.push(c),
            c if c.is_control() => {}
            c => o.push(c),
        }
    }
    o
}

fn css(paper: Paper) -> String {
    format!(
        r#"@page {{ size: {}; margin: 16mm 14mm 18mm 14mm; }}
*{{box-sizing:border-box}}
body{{font-family:"DejaVu Sans",Verdana,Arial,sans-serif;font-size:10pt;color:#222;margin:0 auto;max-width:190mm;padding:8mm 6mm;line-height:1.35}}
header.run{{display:flex;justify-content:space-between;border-bottom:1px solid #888;font-size:8pt;color:#555;padding-bottom:2px;margin-bottom:6mm}}
h1{{font-size:18pt;margin:0}} .ref{{font-size:12pt;font-weight:bold;color:#1f3a5f;margin:2px 0}}
.sub{{color:#666;font-size:8pt}}
h2{{font-size:13pt;color:#1f3a5f;border-bottom:1px solid #ddd;margin:16px 0 6px;break-after:avoid}}
h3{{font-size:10.5pt;margin:10px 0 4px;break-after:avoid}}
p,td,dd,dt{{overflow-wrap:anywhere;unicode-bidi:plaintext}}
th{{overflow-wrap:normal;word-break:normal;hyphens:none}}
p{{margin:0 0 6px;white-space:pre-wrap}}
p.note{{color:#666;font-size:8pt}}
table{{border-collapse:collapse;width:100%;font-size:8.5pt;margin:4px 0 10px}}
thead{{display:table-header-group}} tr{{break-inside:avoid}}
th{{background:#e8ecf1;text-align:left;padding:3px}} td{{padding:3px;border-bottom:1px solid #ddd;vertical-align:top;white-space:pre-wrap}}
td.num,th.num{{text-align:right;font-variant-numeric:tabular-nums}} td.nw{{white-space:nowrap;overflow-wrap:normal}}
table.kv td{{border:none;padding:1px 8px 1px 0}} table.kv td.k{{color:#666;font-weight:bold;width:34%}}
figure{{margin:6px 0 12px;break-inside:avoid}} figcaption{{color:#666;font-size:8pt;white-space:pre-wrap;overflow-wrap:anywhere}}
figure img{{max-width:100%;max-height:120mm}}
svg{{width:100%;height:auto}}
.box{{border:1px solid #b06a00;background:#fdf6e3;padding:6px 10px;margin:8px 0;break-inside:avoid}}
.box b{{display:block;margin-bottom:3px}}
.proof{{border-top:1px solid #ddd;margin-top:12px;font-size:8pt}}
.hash{{font-family:"DejaVu Sans Mono",monospace;overflow-wrap:anywhere}}
@media print{{body{{max-width:none;padding:0}} header.run{{position:static}}}}
"#,
        paper.css()
    )
}

pub fn render(doc: &Document, paper: Paper) -> String {
    let mut h = String::with_capacity(64 * 1024);
    h.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    // forbid every outside fetch and every script, even if something slipped through
    h.push_str("<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; img-src data:; style-src 'unsafe-inline'\">\n");
    let _ = writeln!(
        h,
        "<title>{} {}</title>",
        esc(&doc.title),
        esc(&doc.reference)
    );
    let _ = writeln!(h, "<style>{}</style>\n</head>\n<body>", css(paper));
    let _ = writeln!(
        h,
        "<header class=\"run\"><span><b>{}</b> · {}</span><span>shardlog</span></header>",
        esc(&doc.reference),
        esc(&doc.title)
    );
    let _ = writeln!(
        h,
        "<h1>{}</h1>\n<div class=\"ref\">{}</div>",
        esc(&doc.title),
        esc(&doc.reference)
    );
    if !doc.subtitle.is_empty() {
        let _ = writeln!(h, "<div class=\"sub\">{}</div>", esc(&doc.subtitle));
    }
    for b in &doc.blocks {
        block(&mut h, b);
    }
    if !doc.proof.is_empty() {
        h.push_str("<div class=\"proof\"><table class=\"kv\">\n");
        for (k, v) in &doc.proof {
            let _ = writeln!(
                h,
                "<tr><td class=\"k\">{}</td><td class=\"hash\">{}</td></tr>",
                esc(k),
                esc(v)
            );
        }
        h.push_str("</table></div>\n");
    }
    h.push_str("</body>\n</html>\n");
    h
}

fn block(h: &mut String, b: &Block) {
    match b {
        Block::Heading(t) => {
            let _ = writeln!(h, "<h2>{}</h2>", esc(t));
        }
        Block::Subheading(t) => {
            let _ = writeln!(h, "<h3>{}</h3>", esc(t));
        }
        Block::Paragraph(t) => {
            let _ = writeln!(h, "<p>{}</p>", esc(t));
        }
        Block::Note(t) => {
            let _ = writeln!(h, "<p class=\"note\">{}</p>", esc(t));
        }
        Block::KeyValue(pairs) => {
            h.push_str("<table class=\"kv\">\n");
            for (k, v) in pairs {
                let _ = writeln!(
                    h,
                    "<tr><td class=\"k\">{}</td><td>{}</td></tr>",
                    esc(k),
                    esc(v)
                );
            }
            h.push_str("</table>\n");
        }
        Block::Table(t) => {
            h.push_str("<table>\n<thead><tr>");
            for (i, c) in t.header.iter().enumerate() {
                let cls = if t.is_numeric(i) {
                    " class=\"num\""
                } else {
                    ""
                };
                let _ = write!(h, "<th{cls}>{}</th>", esc(c));
            }
            h.push_str("</tr></thead>\n<tbody>\n");
            for r in &t.rows {
                h.push_str("<tr>");
                for (i, c) in r.iter().enumerate() {
                    // short unbreakable cells (references, dates) stay on one line
                    let short = !c.contains(char::is_whitespace) && c.chars().count() <= 24;
                    let cls = match (t.is_numeric(i), short) {
                        (true, true) => " class=\"num nw\"",
                        (true, false) => " class=\"num\"",
                        (false, true) => " class=\"nw\"",
                        (false, false) => "",
                    };
                    let _ = write!(h, "<td{cls}>{}</td>", esc(c));
                }
                h.push_str("</tr>\n");
            }
            h.push_str("</tbody></table>\n");
        }
        Block::Figure { chart, caption } => {
            let (w, ht) = match chart {
                super::chart::Chart::Weibull { series, .. } => {
                    (500.0, 230.0 + 12.0 * series.len().min(6) as f32)
                }
                super::chart::Chart::Bars { bars, .. } => {
                    (500.0, (40.0 + 16.0 * bars.len() as f32).clamp(80.0, 420.0))
                }
                _ => (500.0, 200.0),
            };
            let _ = writeln!(
                h,
                "<figure><svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {w} {ht}\" role=\"img\" aria-label=\"{}\">",
                esc(caption)
            );
            for p in chart.layout(w, ht) {
                svg_prim(h, &p);
            }
            let _ = writeln!(
                h,
                "</svg><figcaption>{}</figcaption></figure>",
                esc(caption)
            );
        }
        Block::Picture(p) => picture(h, p),
        Block::Boxed { title, lines } => {
            let _ = write!(h, "<div class=\"box\"><b>{}</b>", esc(title));
            for l in lines {
                let _ = write!(h, "<p>{}</p>", esc(l));
            }
            h.push_str("</div>\n");
        }
    }
}

fn picture(h: &mut String, p: &Picture) {
    let caption = format!("{} — {}\nSHA-256 {}", p.name, p.caption, p.sha256);
    match p.mime() {
        Some(mime) => {
            let _ = writeln!(
                h,
                "<figure><img alt=\"{}\" src=\"data:{mime};base64,{}\"><figcaption>{}</figcaption></figure>",
                esc(&p.name),
                base64(&p.bytes),
                esc(&caption)
            );
        }
        None => {
            let _ = writeln!(
                h,
                "<p class=\"note\">Attachment not shown (its content is not a JPEG or PNG image): {} — {}<br>SHA-256 <span class=\"hash\">{}</span></p>",
                esc(&p.name),
                esc(&p.caption),
                esc(&p.sha256)
            );
        }
    }
}

fn f(v: f32) -> String {
    format!("{:.2}", v)
}

fn svg_prim(h: &mut String, p: &Prim) {
    match p {
        Prim::Line {
            x1,
            y1,
            x2,
            y2,
            width,
            color,
            dashed,
        } => {
            let dash = if *dashed {
                " stroke-dasharray=\"3 2\""
            } else {
                ""
            };
            let _ = writeln!(
                h,
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{}\" stroke-width=\"{}\"{dash}/>",
                f(*x1),
                f(*y1),
                f(*x2),
                f(*y2),
                color.hex(),
                f(*width)
            );
        }
        Prim::Rect {
            x,
            y,
            w,
            h: hh,
            fill,
        } => {
            let _ = writeln!(
                h,
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{}\"/>",
                f(*x),
                f(*y),
                f(*w),
                f(*hh),
                fill.hex()
            );
        }
        Prim::Dot { x, y, r, fill } => {
            let _ = writeln!(
                h,
                "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{}\"/>",
                f(*x),
                f(*y),
                f(*r),
                fill.hex()
            );
        }
        Prim::Text {
            x,
            y,
            size,
            anchor,
            vertical,
            color,
            text,
        } => {
            let a = match anchor {
                Anchor::Start => "start",
                Anchor::Middle => "middle",
                Anchor::End => "end",
            };
            let rot = if *vertical {
                format!(" transform=\"rotate(-90 {} {})\"", f(*x), f(*y))
            } else {
                String::new()
            };
            let _ = writeln!(
                h,
                "<text x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{a}\" fill=\"{}\"{rot}>{}</text>",
                f(*x),
                f(*y),
                f(*size),
                color.hex(),
                esc(text)
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escaping_covers_markup_quotes_and_bidi_overrides() {
        assert_eq!(
            esc("<script>alert(\"x\" & 'y')</script>"),
            "&lt;script&gt;alert(&quot;x&quot; &amp; &#39;y&#39;)&lt;/script&gt;"
        );
        assert_eq!(esc("a\u{202e}b\u{1b}c"), "abc");
    }
}
