//! Attachments shown in a report. A file is embedded only when its own bytes say it is a
//! JPEG or PNG whose header reads cleanly; anything else (a renamed text file, a truncated
//! photo, a format we do not embed) is listed by name and SHA-256 and never embedded.

use std::sync::Arc;

use serde::Serialize;

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum PictureKind {
    Jpeg {
        width: u32,
        height: u32,
        components: u8,
    },
    Png {
        width: u32,
        height: u32,
    },
    /// Not embedded: listed by hash only.
    Other,
}

#[derive(Debug, Clone, Serialize)]
pub struct Picture {
    pub name: String,
    pub sha256: String,
    pub caption: String,
    pub kind: PictureKind,
    #[serde(skip)]
    pub bytes: Arc<Vec<u8>>,
}

/// Largest picture (in pixels) we decode; larger ones are listed, not embedded.
const MAX_PIXELS: u64 = 50_000_000;

impl Picture {
    pub fn new(name: &str, sha256: &str, caption: &str, bytes: Arc<Vec<u8>>) -> Picture {
        let kind = sniff(&bytes);
        Picture {
            name: name.to_string(),
            sha256: sha256.to_string(),
            caption: caption.to_string(),
            kind,
            bytes,
        }
    }

    pub fn is_embeddable(&self) -> bool {
        !matches!(self.kind, PictureKind::Other)
    }

    pub fn mime(&self) -> Option<&'static str> {
        match self.kind {
            PictureKind::Jpeg { .. } => Some("image/jpeg"),
            PictureKind::Png { .. } => Some("image/png"),
            PictureKind::Other => None,
        }
    }

    pub fn size(&self) -> (u32, u32) {
        match self.kind {
            PictureKind::Jpeg { width, height, .. } | PictureKind::Png { width, height } => {
                (width, height)
            }
            PictureKind::Other => (0, 0),
        }
    }
}

/// What the bytes are, from their own header.
pub fn sniff(b: &[u8]) -> PictureKind {
    if let Some(k) = sniff_jpeg(b) {
        return k;
    }
    if let Some(k) = sniff_png(b) {
        return k;
    }
    PictureKind::Other
}

fn sniff_jpeg(b: &[u8]) -> Option<PictureKind> {
    if b.len() < 4 || b[0] != 0xFF || b[1] != 0xD8 {
        return None;
    }
    let mut i = 2usize;
    while i + 4 <= b.len() {
        if b[i] != 0xFF {
            return None;
        }
        let marker = b[i + 1];
        if marker == 0xFF {
            i += 1;
            continue;
        }
        if marker == 0xD8 || (0xD0..=0xD7).contains(&marker) || marker == 0x01 {
            i += 2;
            continue;
        }
        let len = usize::from(u16::from_be_bytes([b[i + 2], b[i + 3]]));
        if len < 2 || i + 2 + len > b.len() {
            return None;
        }
        // SOF0 baseline, SOF1 extended, SOF2 progressive: what PDF's DCTDecode reads
        if matches!(marker, 0xC0..=0xC2) {
            let s = &b[i + 4..i + 2 + len];
            if s.len() < 6 {
                return None;
            }
            let height = u32::from(u16::from_be_bytes([s[1], s[2]]));
            let width = u32::from(u16::from_be_bytes([s[3], s[4]]));
            let components = s[5];
            if s[0] != 8 || width == 0 || height == 0 || !matches!(components, 1 | 3) {
                return None;
            }
            if u64::from(width) * u64::from(height) > MAX_PIXELS {
                return None;
            }
            // the end-of-image marker must be there: a truncated file is not embedded
            if !b.windows(2).rev().take(64).any(|w| w == [0xFF, 0xD9]) {
                return None;
            }
            return Some(PictureKind::Jpeg {
                width,
                height,
                components,
            });
        }
        if matches!(marker, 0xC3 | 0xC5..=0xC7 | 0xC9..=0xCB | 0xCD..=0xCF | 0xDA) {
            return None; // lossless / arithmetic / scan before a frame header
        }
        i += 2 + len;
    }
    None
}

fn sniff_png(b: &[u8]) -> Option<PictureKind> {
    if !b.starts_with(b"\x89PNG\r\n\x1a\n") {
        return None;
    }
    let dec = png::Decoder::new(std::io::Cursor::new(b));
    let reader = dec.read_info().ok()?;
    let info = reader.info();
    let (width, height) = (info.width, info.height);
    if width == 0 || height == 0 || u64::from(width) * u64::from(height) > MAX_PIXELS {
        return None;
    }
    Some(PictureKind::Png { width, height })
}

/// The compressed image data of a PNG that PDF can read as it is (FlateDecode with the PNG
/// predictors): 8-bit greyscale or RGB, not interlaced. Returns (width, height, colours,
/// the concatenated IDAT data). Anything else goes through [`decode_png`].
pub fn png_passthrough(b: &[u8]) -> Option<(u32, u32, u8, Vec<u8>)> {
    if !b.starts_with(b"\x89PNG\r\n\x1a\n") {
        return None;
    }
    let mut i = 8usize;
    let mut head: Option<(u32, u32, u8)> = None;
    let mut idat = Vec::new();
    while i + 8 <= b.len() {
        let len = u32::from_be_bytes([b[i], b[i + 1], b[i + 2], b[i + 3]]) as usize;
        let kind = &b[i + 4..i + 8];
        let start = i + 8;
        let end = start.checked_add(len)?;
        if end + 4 > b.len() {
            return None;
        }
        let data = &b[start..end];
        match kind {
            b"IHDR" => {
                if data.len() != 13 {
                    return None;
                }
                let w = u32::from_be_bytes([data[0], data[1], data[2], data[3]]);
                let h = u32::from_be_bytes([data[4], data[5], data[6], data[7]]);
                let (depth, color, interlace) = (data[8], data[9], data[12]);
                let colors = match color {
                    0 => 1,
                    2 => 3,
                    _ => return None,
                };
                if depth != 8 || interlace != 0 || w == 0 || h == 0 {
                    return None;
                }
                head = Some((w, h, colors));
            }
            b"IDAT" => idat.extend_from_slice(data),
            b"IEND" => break,
            // transparency or gamma chunks change what the samples mean: decode instead
            b"tRNS" | b"gAMA" | b"iCCP" | b"sBIT" => return None,
            _ => {}
        }
        i = end + 4;
    }
    let (w, h, c) = head?;
    if idat.is_empty() {
        return None;
    }
    Some((w, h, c, idat))
}

/// A PNG decoded to 8-bit samples for the PDF: colour (1 or 3 channels) and an optional
/// alpha plane. `None` when the data do not decode (the picture is then listed, not drawn).
pub struct DecodedPng {
    pub width: u32,
    pub height: u32,
    pub channels: u8,
    pub color: Vec<u8>,
    pub alpha: Option<Vec<u8>>,
}

pub fn decode_png(b: &[u8]) -> Option<DecodedPng> {
    let mut dec = png::Decoder::new(std::io::Cursor::new(b));
    dec.set_transformations(png::Transformations::EXPAND | png::Transformations::STRIP_16);
    let mut reader = dec.read_info().ok()?;
    let mut buf = vec![0u8; reader.output_buffer_size()?];
    let frame = reader.next_frame(&mut buf).ok()?;
    let (w, h) = (frame.width, frame.height);
    let px = usize::try_from(u64::from(w) * u64::from(h)).ok()?;
    let data = buf.get(..frame.buffer_size())?;
    let (channels, has_alpha) = match frame.color_type {
        png::ColorType::Grayscale => (1u8, false),
        png::ColorType::GrayscaleAlpha => (1, true),
        png::ColorType::Rgb => (3, false),
        png::ColorType::Rgba => (3, true),
        png::ColorType::Indexed => return None, // EXPAND turns palettes into RGB(A)
    };
    let stride = usize::from(channels) + usize::from(has_alpha);
    if data.len() < px * stride {
        return None;
    }
    if !has_alpha {
        return Some(DecodedPng {
            width: w,
            height: h,
            channels,
            color: data[..px * stride].to_vec(),
            alpha: None,
        });
    }
    let mut color = Vec::with_capacity(px * usize::from(channels));
    let mut alpha = Vec::with_capacity(px);
    for p in data[..px * stride].chunks_exact(stride) {
        color.extend_from_slice(&p[..usize::from(channels)]);
        alpha.push(p[usize::from(channels)]);
    }
    Some(DecodedPng {
        width: w,
        height: h,
        channels,
        color,
        alpha: Some(alpha),
    })
}

/// Standard base64 (RFC 4648, with padding) for data URIs.
pub fn base64(data: &[u8]) -> String {
    const T: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(data.len().div_ceil(3) * 4);
    for chunk in data.chunks(3) {
        let b = [
            chunk[0],
            chunk.get(1).copied().unwrap_or(0),
            chunk.get(2).copied().unwrap_or(0),
        ];
        let n = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        out.push(char::from(T[(n >> 18) as usize & 63]));
        out.push(char::from(T[(n >> 12) as usize & 63]));
        out.push(if chunk.len() > 1 {
            char::from(T[(n >> 6) as usize & 63])
        } else {
            '='
        });
        out.push(if chunk.len() > 2 {
            char::from(T[n as usize & 63])
        } else {
            '='
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_matches_rfc4648_vectors() {
        // RFC 4648 §10 test vectors
        for (i, o) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64(i.as_bytes()), o);
        }
    }

    #[test]
    fn text_pretending_to_be_a_photo_is_not_an_image() {
        assert_eq!(sniff(b"<script>alert(1)</script>"), PictureKind::Other);
        assert_eq!(sniff(b"\xFF\xD8\xFF\xE0garbage"), PictureKind::Other);
        assert_eq!(sniff(b"\x89PNG\r\n\x1a\nnot really"), PictureKind::Other);
        assert_eq!(sniff(b""), PictureKind::Other);
    }

    #[test]
    fn a_real_png_is_recognised_and_decoded() {
        let png = tiny_png();
        assert_eq!(
            sniff(&png),
            PictureKind::Png {
                width: 2,
                height: 2
            }
        );
        let d = decode_png(&png).unwrap();
        assert_eq!((d.width, d.height, d.channels), (2, 2, 3));
        assert_eq!(d.color.len(), 12);
        let (w, h, c, data) = png_passthrough(&png).unwrap();
        assert_eq!((w, h, c), (2, 2, 3));
        assert!(!data.is_empty());
        assert!(png_passthrough(b"\x89PNG\r\n\x1a\n\0\0\0\x0dIHDR").is_none());
    }

    pub(crate) fn tiny_png() -> Vec<u8> {
        let mut out = Vec::new();
        {
            let mut enc = png::Encoder::new(&mut out, 2, 2);
            enc.set_color(png::ColorType::Rgb);
            enc.set_depth(png::BitDepth::Eight);
            let mut w = enc.write_header().unwrap();
            w.write_image_data(&[255, 0, 0, 0, 255, 0, 0, 0, 255, 255, 255, 255])
                .unwrap();
        }
        out
    }
}
