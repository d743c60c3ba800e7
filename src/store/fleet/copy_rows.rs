//! Rows for PostgreSQL's binary COPY, encoded into a byte buffer that is sent in large chunks
//! (one write per chunk instead of one per row), for the bulk fill. The format: a signature
//! and two zero words, then per row its field count and per field its length (-1 for NULL)
//! and bytes (text as UTF-8, `int8` and `float8` as 8 bytes big-endian), then -1 at the end
//! (PostgreSQL documentation, "COPY", binary format).

/// The signature and header every binary COPY stream starts with.
const HEADER: &[u8] = b"PGCOPY\n\xff\r\n\0\0\0\0\0\0\0\0\0";

/// A chunk is handed over once it holds about this many bytes.
pub(crate) const CHUNK: usize = 256 * 1024;

/// Binary COPY rows being encoded.
pub(crate) struct CopyRows {
    buf: Vec<u8>,
}

impl CopyRows {
    /// A new stream: its header comes first.
    pub(crate) fn new() -> CopyRows {
        let mut buf = Vec::with_capacity(CHUNK + 8 * 1024);
        buf.extend_from_slice(HEADER);
        CopyRows { buf }
    }

    /// Start a row of `fields` fields.
    pub(crate) fn row(&mut self, fields: i16) -> &mut Self {
        self.buf.extend_from_slice(&fields.to_be_bytes());
        self
    }

    fn length(&mut self, n: usize) {
        // a field is at most 1 GB in PostgreSQL; a longer one is refused by the server
        let n = i32::try_from(n).unwrap_or(i32::MAX);
        self.buf.extend_from_slice(&n.to_be_bytes());
    }

    pub(crate) fn text(&mut self, s: &str) -> &mut Self {
        self.length(s.len());
        self.buf.extend_from_slice(s.as_bytes());
        self
    }

    pub(crate) fn text_or_null(&mut self, s: Option<&str>) -> &mut Self {
        match s {
            Some(s) => self.text(s),
            None => self.null(),
        }
    }

    pub(crate) fn int8(&mut self, v: i64) -> &mut Self {
        self.length(8);
        self.buf.extend_from_slice(&v.to_be_bytes());
        self
    }

    pub(crate) fn float8_or_null(&mut self, v: Option<f64>) -> &mut Self {
        match v {
            Some(v) => {
                self.length(8);
                self.buf.extend_from_slice(&v.to_bits().to_be_bytes());
                self
            }
            None => self.null(),
        }
    }

    pub(crate) fn null(&mut self) -> &mut Self {
        self.buf.extend_from_slice(&(-1i32).to_be_bytes());
        self
    }

    /// The bytes so far when they make a chunk.
    pub(crate) fn full_chunk(&mut self) -> Option<Vec<u8>> {
        (self.buf.len() >= CHUNK).then(|| self.take())
    }

    /// The bytes so far.
    pub(crate) fn take(&mut self) -> Vec<u8> {
        std::mem::replace(&mut self.buf, Vec::with_capacity(CHUNK + 8 * 1024))
    }

    /// The last bytes of the stream, with its end mark.
    pub(crate) fn end(mut self) -> Vec<u8> {
        self.buf.extend_from_slice(&(-1i16).to_be_bytes());
        self.buf
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The bytes of one row as the binary format lays them out (PostgreSQL documentation,
    /// "COPY", "Binary Format": 11-byte signature, flags, header extension length; per tuple
    /// a 16-bit field count, per field a 32-bit length then the data; trailer -1).
    #[test]
    fn a_row_is_laid_out_as_the_binary_format_says() {
        let mut rows = CopyRows::new();
        rows.row(4)
            .text("ab")
            .text_or_null(None)
            .int8(-2)
            .float8_or_null(Some(1.5));
        let bytes = rows.end();
        let mut want: Vec<u8> = b"PGCOPY\n\xff\r\n\0".to_vec();
        want.extend_from_slice(&[0, 0, 0, 0, 0, 0, 0, 0]);
        want.extend_from_slice(&[0, 4]);
        want.extend_from_slice(&[0, 0, 0, 2, b'a', b'b']);
        want.extend_from_slice(&[0xff, 0xff, 0xff, 0xff]);
        want.extend_from_slice(&[0, 0, 0, 8, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xfe]);
        // 1.5 is 0x3FF8000000000000 in IEEE 754 double precision
        want.extend_from_slice(&[0, 0, 0, 8, 0x3f, 0xf8, 0, 0, 0, 0, 0, 0]);
        want.extend_from_slice(&[0xff, 0xff]);
        assert_eq!(bytes, want);
    }

    #[test]
    fn a_chunk_is_handed_over_only_when_full() {
        let mut rows = CopyRows::new();
        assert!(rows.full_chunk().is_none());
        let long = "x".repeat(CHUNK);
        rows.row(1).text(&long);
        let chunk = rows.full_chunk().expect("a full chunk");
        assert!(chunk.starts_with(b"PGCOPY"));
        assert_eq!(chunk.len(), HEADER.len() + 2 + 4 + CHUNK);
        assert_eq!(rows.end(), vec![0xff, 0xff]);
    }
}
