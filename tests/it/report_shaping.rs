//! Right-to-left and joined scripts in the PDF: an Arabic note is drawn with its shaped
//! glyphs. The PDF is read the way a viewer reads it: its streams inflated, the font's
//! ToUnicode map parsed, and the glyph codes of each text-showing array compared.

use std::collections::HashMap;

use shardlog::report::doc::{Document, Paper};
use shardlog::report::pdf;

/// Every stream of the PDF, inflated where it is deflated.
fn streams(pdf: &[u8]) -> Vec<Vec<u8>> {
    let mut out = Vec::new();
    let mut at = 0;
    while let Some(i) = find(&pdf[at..], b"stream\n") {
        let start = at + i + b"stream\n".len();
        let Some(len) = find(&pdf[start..], b"\nendstream") else {
            break;
        };
        let raw = &pdf[start..start + len];
        out.push(
            miniz_oxide::inflate::decompress_to_vec_zlib(raw).unwrap_or_else(|_| raw.to_vec()),
        );
        at = start + len + b"\nendstream".len();
    }
    out
}

fn find(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).position(|w| w == needle)
}

/// The ToUnicode maps: glyph code → text.
fn to_unicode(streams: &[Vec<u8>]) -> HashMap<u16, String> {
    let mut map = HashMap::new();
    for s in streams {
        let text = String::from_utf8_lossy(s);
        if !text.contains("beginbfchar") {
            continue;
        }
        for line in text.lines() {
            let parts: Vec<&str> = line
                .split(['<', '>'])
                .filter(|p| !p.trim().is_empty())
                .collect();
            if parts.len() != 2 || parts[0].len() != 4 {
                continue;
            }
            let Ok(code) = u16::from_str_radix(parts[0], 16) else {
                continue;
            };
            let units: Vec<u16> = (0..parts[1].len() / 4)
                .filter_map(|i| u16::from_str_radix(&parts[1][i * 4..i * 4 + 4], 16).ok())
                .collect();
            map.insert(code, String::from_utf16_lossy(&units));
        }
    }
    map
}

/// The glyph codes of every TJ array of the content streams, one list per array.
fn tj_arrays(streams: &[Vec<u8>]) -> Vec<Vec<u16>> {
    let mut out = Vec::new();
    // content streams are text (fonts and pictures are not)
    for s in streams.iter().filter(|s| std::str::from_utf8(s).is_ok()) {
        let mut i = 0;
        while i < s.len() {
            if s[i] != b'[' {
                i += 1;
                continue;
            }
            let mut bytes = Vec::new();
            let mut j = i + 1;
            while j < s.len() && s[j] != b']' {
                match s[j] {
                    b'(' => {
                        j += 1;
                        while j < s.len() && s[j] != b')' {
                            if s[j] == b'\\' {
                                j += 1;
                                match s[j] {
                                    b'n' => bytes.push(b'\n'),
                                    b'r' => bytes.push(b'\r'),
                                    b't' => bytes.push(b'\t'),
                                    b'b' => bytes.push(8),
                                    b'f' => bytes.push(12),
                                    b'0'..=b'7' => {
                                        let mut v = 0u32;
                                        let mut k = 0;
                                        while k < 3 && matches!(s[j], b'0'..=b'7') {
                                            v = v * 8 + u32::from(s[j] - b'0');
                                            j += 1;
                                            k += 1;
                                        }
                                        j -= 1;
                                        bytes.push(v as u8);
                                    }
                                    c => bytes.push(c),
                                }
                            } else {
                                bytes.push(s[j]);
                            }
                            j += 1;
                        }
                    }
                    b'<' => {
                        let end = j + find(&s[j..], b">").unwrap_or(0);
                        let hex = String::from_utf8_lossy(&s[j + 1..end]).to_string();
                        for k in (0..hex.len() / 2).map(|k| k * 2) {
                            bytes.push(u8::from_str_radix(&hex[k..k + 2], 16).unwrap_or(0));
                        }
                        j = end;
                    }
                    _ => {}
                }
                j += 1;
            }
            if find(&s[j..(j + 6).min(s.len())], b"TJ").is_some() {
                out.push(
                    bytes
                        .chunks(2)
                        .map(|c| u16::from_be_bytes([c[0], c[1]]))
                        .collect(),
                );
            }
            i = j + 1;
        }
    }
    out
}

#[test]
fn an_arabic_note_is_drawn_with_its_joined_forms() {
    let mut doc = Document::new("Incident summary", "BR-260314-0001", "shaping");
    // beh three times: final, medial and initial forms, three different glyphs for one
    // letter (Unicode Arabic Presentation Forms-B U+FE90, U+FE92, U+FE91); lam-alef: one
    // ligature glyph for two letters (U+FEFB)
    doc.note("ببب");
    doc.note("لا");
    let bytes = pdf::render(&doc, Paper::A4);
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("report");
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("arabic-note.pdf"), &bytes).unwrap();

    let streams = streams(&bytes);
    let unicode = to_unicode(&streams);
    let arrays = tj_arrays(&streams);
    let text_of = |codes: &[u16]| -> Vec<String> {
        codes
            .iter()
            .map(|c| unicode.get(c).cloned().unwrap_or_default())
            .collect()
    };
    let beh = arrays
        .iter()
        .find(|a| text_of(a) == ["ب", "ب", "ب"])
        .unwrap_or_else(|| {
            panic!(
                "no TJ array of three behs: {:?}",
                arrays.iter().map(|a| text_of(a)).collect::<Vec<_>>()
            )
        });
    // unshaped, the three would be the same glyph code
    assert_ne!(beh[0], beh[1]);
    assert_ne!(beh[1], beh[2]);
    assert_ne!(beh[0], beh[2]);
    assert!(
        arrays.iter().any(|a| text_of(a) == ["لا"]),
        "no lam-alef ligature: {:?}",
        arrays.iter().map(|a| text_of(a)).collect::<Vec<_>>()
    );
}
