//! Renderers read back by outside tools: PDFs through poppler's pdftotext and pdftoppm, HTML
//! through headless Chromium (print to PDF and a screenshot). scripts/test installs
//! poppler-utils and chromium when they are missing.

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::support::report::*;
use shardlog::report::doc::Paper;
use shardlog::report::{html, markdown, pdf};

fn out_dir(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("report")
        .join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn pdftotext(pdf: &Path, page: Option<usize>) -> String {
    let mut c = Command::new("pdftotext");
    c.arg("-enc").arg("UTF-8").arg("-layout");
    if let Some(p) = page {
        c.arg("-f").arg(p.to_string()).arg("-l").arg(p.to_string());
    }
    let o = c
        .arg(pdf)
        .arg("-")
        .output()
        .expect("pdftotext runs (poppler-utils)");
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        o.status.success(),
        "pdftotext failed on {}: {err}",
        pdf.display()
    );
    assert!(
        !err.contains("Syntax Error") && !err.contains("rror"),
        "poppler complained about {}: {err}",
        pdf.display()
    );
    String::from_utf8(o.stdout).unwrap()
}

fn page_count(pdf: &Path) -> usize {
    let o = Command::new("pdfinfo")
        .arg(pdf)
        .output()
        .expect("pdfinfo runs");
    assert!(o.status.success());
    let s = String::from_utf8_lossy(&o.stdout);
    s.lines()
        .find_map(|l| l.strip_prefix("Pages:"))
        .and_then(|v| v.trim().parse().ok())
        .expect("page count")
}

fn page_size(pdf: &Path) -> String {
    let o = Command::new("pdfinfo")
        .arg(pdf)
        .output()
        .expect("pdfinfo runs");
    let s = String::from_utf8_lossy(&o.stdout).to_string();
    s.lines()
        .find(|l| l.starts_with("Page size:"))
        .unwrap_or("")
        .to_string()
}

fn pdftoppm(pdf: &Path, prefix: &Path) -> Vec<PathBuf> {
    let o = Command::new("pdftoppm")
        .arg("-png")
        .arg("-r")
        .arg("60")
        .arg(pdf)
        .arg(prefix)
        .output()
        .expect("pdftoppm runs (poppler-utils)");
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        o.status.success() && !err.contains("rror"),
        "pdftoppm: {err}"
    );
    let dir = prefix.parent().unwrap();
    let stem = prefix.file_name().unwrap().to_string_lossy().to_string();
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.file_name()
                .map(|n| n.to_string_lossy().starts_with(&format!("{stem}-")))
                .unwrap_or(false)
                && p.extension().map(|e| e == "png").unwrap_or(false)
        })
        .collect();
    v.sort();
    v
}

/// A PNG page that is not blank: more than a sliver of its pixels are not white.
fn png_has_ink(path: &Path) -> bool {
    let dec = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(path).unwrap()));
    let mut r = dec.read_info().unwrap();
    let mut buf = vec![0; r.output_buffer_size().unwrap()];
    let info = r.next_frame(&mut buf).unwrap();
    let data = &buf[..info.buffer_size()];
    let dark = data.iter().filter(|&&b| b < 200).count();
    dark * 200 > data.len()
}

#[test]
fn pdf_pages_read_back_with_header_page_numbers_and_unicode() {
    let doc = sample_document(false);
    for paper in [Paper::A4, Paper::Letter] {
        let dir = out_dir("sample");
        let path = dir.join(format!("sample-{paper:?}.pdf"));
        let bytes = pdf::render(&doc, paper);
        assert!(bytes.starts_with(b"%PDF-"));
        std::fs::write(&path, &bytes).unwrap();
        // deterministic: the same document gives the same bytes
        assert_eq!(bytes, pdf::render(&doc, paper));

        let size = page_size(&path);
        match paper {
            Paper::A4 => assert!(size.contains("595.28 x 841.89"), "{size}"),
            Paper::Letter => assert!(size.contains("612 x 792"), "{size}"),
        }
        let n = page_count(&path);
        assert!(n >= 3, "the long table must spill over pages, got {n}");
        let all = pdftotext(&path, None);
        for needle in [
            "Incident summary",
            "Mirror-constant relation",
            "MPa·√m",
            "µm",
            "σ",
            "−4 °C",
            "Ünterlinde Glasbau",
            "Cautions",
        ] {
            assert!(
                all.contains(needle),
                "{needle} missing from {paper:?} PDF text"
            );
        }
        for p in 1..=n {
            let t = pdftotext(&path, Some(p));
            assert!(
                t.contains("TST-0001"),
                "page {p} lacks the header reference"
            );
            assert!(
                t.contains(&format!("Page {p} of {n}")),
                "page {p} lacks its number"
            );
        }
        // the long table's header row is repeated on each page it reaches
        let with_header = (1..=n)
            .filter(|p| pdftotext(&path, Some(*p)).contains("Reading no."))
            .count();
        let with_rows = (1..=n)
            .filter(|p| pdftotext(&path, Some(*p)).contains("row 1"))
            .count();
        assert!(
            with_rows >= 2 && with_header >= with_rows,
            "{with_header} {with_rows}"
        );
        // every row reached the page (no truncated table)
        for i in [1, 57, 119, 120] {
            assert!(all.contains(&format!("row {i} ")), "row {i} missing");
        }
        assert!(!all.contains("NaN"));
        let pngs = pdftoppm(&path, &dir.join(format!("page-{paper:?}")));
        assert_eq!(pngs.len(), n);
        for p in &pngs {
            assert!(png_has_ink(p), "{} looks blank", p.display());
        }
    }
}

#[test]
fn hostile_text_is_safe_in_every_format() {
    let doc = sample_document(true);
    let dir = out_dir("hostile");

    // PDF: opens, its text reads back, the script tag is plain text
    let path = dir.join("hostile.pdf");
    std::fs::write(&path, pdf::render(&doc, Paper::A4)).unwrap();
    let text = pdftotext(&path, None);
    assert!(text.contains("<script>alert"));
    assert!(text.contains("O'Brien & \"Sons\""));
    assert!(
        text.contains("שלום") || text.contains("םולש"),
        "Hebrew lost"
    );
    assert!(text.contains("Attachment not shown"));
    assert!(
        text.matches('y').count() >= 10_000,
        "the 10,000-character line was cut"
    );
    let pngs = pdftoppm(&path, &dir.join("hostile-page"));
    assert!(!pngs.is_empty());

    // HTML: no live markup from user text, no outside fetch, no script
    let h = html::render(&doc, Paper::A4);
    assert!(!h.contains("<script"), "a script tag survived");
    assert!(h.contains("&lt;script&gt;alert"));
    assert!(h.contains("O&#39;Brien &amp; &quot;Sons&quot;"));
    assert!(!h.contains("src=\"http") && !h.contains("href=") && !h.contains("url("));
    // the file that is not an image is listed, not embedded
    assert_eq!(
        h.matches("data:image/").count(),
        2,
        "only the two real photos embedded"
    );
    let hp = dir.join("hostile.html");
    std::fs::write(&hp, &h).unwrap();
    let (printed, shot) = chromium(&hp, &dir);
    let ptext = pdftotext(&printed, None);
    assert!(
        ptext.contains("<script>alert"),
        "Chromium shows the tag as text"
    );
    assert!(std::fs::metadata(&shot).unwrap().len() > 1000);
    assert!(png_has_ink(&shot));

    // Markdown: no raw tag, no table broken by a pipe
    let md = markdown::render(&doc);
    assert!(!md.contains("<script"));
    assert!(md.contains("&lt;script&gt;"));
    let pipes = |l: &str| l.replace("\\|", "").matches('|').count();
    let mut expected: Option<usize> = None;
    let mut tables = 0;
    for line in md.lines() {
        if line.starts_with("| ") {
            match expected {
                None => {
                    expected = Some(pipes(line));
                    tables += 1;
                }
                Some(n) => assert_eq!(pipes(line), n, "a table row broke: {line:.80}"),
            }
        } else {
            expected = None;
        }
    }
    assert!(tables >= 2);
    std::fs::write(dir.join("hostile.md"), &md).unwrap();
}

#[test]
fn html_prints_in_headless_chromium() {
    let doc = sample_document(false);
    let dir = out_dir("chromium");
    let hp = dir.join("sample.html");
    let h = html::render(&doc, Paper::Letter);
    assert!(h.contains("@page { size: letter"));
    std::fs::write(&hp, &h).unwrap();
    let (printed, shot) = chromium(&hp, &dir);
    let t = pdftotext(&printed, None);
    assert!(t.contains("Incident summary") && t.contains("MPa·√m"));
    assert!(page_count(&printed) >= 2);
    assert!(png_has_ink(&shot));
}

fn chromium(html: &Path, dir: &Path) -> (PathBuf, PathBuf) {
    let stem = html.file_stem().unwrap().to_string_lossy().to_string();
    let printed = dir.join(format!("{stem}-chromium.pdf"));
    let shot = dir.join(format!("{stem}-chromium.png"));
    let profile = tempfile::tempdir().unwrap();
    let url = format!("file://{}", html.display());
    for (flag, out) in [("--print-to-pdf", &printed), ("--screenshot", &shot)] {
        let _ = std::fs::remove_file(out);
        let o = Command::new("chromium")
            .args([
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--disable-quic",
                "--no-first-run",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-sync",
                "--no-pdf-header-footer",
                "--window-size=900,1400",
            ])
            .arg(format!("--user-data-dir={}", profile.path().display()))
            .arg(format!("{flag}={}", out.display()))
            .arg(&url)
            .output()
            .expect("chromium runs");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(o.status.success(), "chromium {flag}: {err}");
        // a blocked fetch or a script error would be reported on the console
        assert!(
            !err.contains("Refused to") && !err.contains("Uncaught"),
            "chromium console: {err}"
        );
        assert!(out.exists(), "chromium wrote no {}", out.display());
    }
    (printed, shot)
}
