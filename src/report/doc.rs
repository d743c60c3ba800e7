//! The document model every renderer reads: a title, the reference shown in each page's
//! header, and a list of blocks. Builders (incident summary, dispute cover) produce it;
//! renderers (PDF, HTML, Markdown) only read it.

use serde::Serialize;

use super::chart::Chart;
use super::image::Picture;

#[derive(Debug, Clone, Serialize)]
pub struct Document {
    /// "Incident summary", "Dispute bundle cover", ...
    pub title: String,
    /// Shown in every page's header (the incident reference, the bundle name).
    pub reference: String,
    /// One line under the title (e.g. who and when).
    pub subtitle: String,
    /// The proof line printed at the end and in the footer: digest and chain head.
    pub proof: Vec<(String, String)>,
    pub blocks: Vec<Block>,
}

#[derive(Debug, Clone, Serialize)]
pub enum Block {
    Heading(String),
    Subheading(String),
    Paragraph(String),
    /// Smaller, grey text (notes under a table, method remarks).
    Note(String),
    /// Label / value pairs, two columns, no rules.
    KeyValue(Vec<(String, String)>),
    Table(Table),
    Figure {
        chart: Chart,
        caption: String,
    },
    Picture(Picture),
    /// A framed box with a title (the cautions).
    Boxed {
        title: String,
        lines: Vec<String>,
    },
}

#[derive(Debug, Clone, Default, Serialize)]
pub struct Table {
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
    /// Right-align these columns (figures).
    pub numeric: Vec<bool>,
}

impl Table {
    pub fn new(header: &[&str]) -> Table {
        Table {
            header: header.iter().map(|s| s.to_string()).collect(),
            rows: Vec::new(),
            numeric: vec![false; header.len()],
        }
    }
    pub fn numeric(mut self, cols: &[usize]) -> Table {
        for &c in cols {
            if let Some(n) = self.numeric.get_mut(c) {
                *n = true;
            }
        }
        self
    }
    pub fn row(&mut self, cells: Vec<String>) {
        let mut cells = cells;
        cells.resize(self.header.len(), String::new());
        self.rows.push(cells);
    }
    pub fn is_numeric(&self, col: usize) -> bool {
        self.numeric.get(col).copied().unwrap_or(false)
    }
}

impl Document {
    pub fn new(title: &str, reference: &str, subtitle: &str) -> Document {
        Document {
            title: title.to_string(),
            reference: reference.to_string(),
            subtitle: subtitle.to_string(),
            proof: Vec::new(),
            blocks: Vec::new(),
        }
    }
    pub fn push(&mut self, b: Block) {
        self.blocks.push(b);
    }
    pub fn heading(&mut self, t: &str) {
        self.blocks.push(Block::Heading(t.to_string()));
    }
    pub fn subheading(&mut self, t: &str) {
        self.blocks.push(Block::Subheading(t.to_string()));
    }
    pub fn para(&mut self, t: impl Into<String>) {
        self.blocks.push(Block::Paragraph(t.into()));
    }
    pub fn note(&mut self, t: impl Into<String>) {
        self.blocks.push(Block::Note(t.into()));
    }
    pub fn kv(&mut self, pairs: Vec<(String, String)>) {
        self.blocks.push(Block::KeyValue(pairs));
    }
}

/// Page sizes for the PDF, in points (1/72 in).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, clap::ValueEnum)]
pub enum Paper {
    #[default]
    A4,
    Letter,
}

impl Paper {
    pub fn size(self) -> (f32, f32) {
        match self {
            Paper::A4 => (595.28, 841.89),
            Paper::Letter => (612.0, 792.0),
        }
    }
    pub fn css(self) -> &'static str {
        match self {
            Paper::A4 => "A4",
            Paper::Letter => "letter",
        }
    }
}

/// A text cell shown when a figure is missing: never "NaN", never an empty cell that a
/// reader could mistake for zero.
pub const NOT_RECORDED: &str = "not recorded";
