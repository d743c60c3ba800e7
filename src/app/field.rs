//! One form field: a text input with live validation.
//!
//! The field keeps what the user typed exactly as typed (so nothing is lost when it does not
//! parse) and, after every edit, the reason it is refused, which the screen shows beside it.

use super::key::{Key, KeyPress};
use super::text_input::TextInput;
use shardlog_core::units::{self, Dimension};

/// What a field accepts. Validation uses `shardlog::units` for every quantity.
#[derive(Debug, Clone, PartialEq)]
pub enum FieldKind {
    /// Free text; `required` refuses an empty value.
    Text { required: bool },
    /// A quantity with a unit; must be > 0 when `positive`, may be empty when `optional`.
    Quantity {
        dim: Dimension,
        positive: bool,
        optional: bool,
    },
    /// A signed quantity (e.g. a residual stress, compression negative).
    SignedQuantity { dim: Dimension, optional: bool },
    /// Several positive quantities, one per line (mirror readings).
    Readings { dim: Dimension },
    /// A date, YYYY-MM-DD.
    Date { optional: bool },
    /// A whole number ≥ 0.
    Count { optional: bool },
    /// A plain positive number without unit (a ratio such as a/c).
    Number { optional: bool },
    /// A signed number without unit (a temperature in °C); "−" is read as a minus sign.
    Float { optional: bool },
    /// A date and time, "YYYY-MM-DD HH:MM" (UTC).
    DateTime { optional: bool },
}

/// A validated field value (SI for quantities).
#[derive(Debug, Clone, PartialEq)]
pub enum FieldValue {
    Empty,
    Text(String),
    Quantity(f64),
    Readings(Vec<f64>),
    Date(chrono::NaiveDate),
    Count(u64),
    Number(f64),
    DateTime(chrono::DateTime<chrono::Utc>),
}

/// A labelled input with its validation state.
pub struct Field {
    pub key: &'static str,
    pub label: &'static str,
    pub kind: FieldKind,
    pub hint: &'static str,
    content: TextInput,
    error: Option<String>,
    dirty: bool,
}

impl std::fmt::Debug for Field {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Field")
            .field("key", &self.key)
            .field("text", &self.text())
            .field("error", &self.error)
            .finish()
    }
}

impl Field {
    pub fn new(key: &'static str, label: &'static str, kind: FieldKind) -> Self {
        let mut f = Field {
            key,
            label,
            kind,
            hint: "",
            content: TextInput::default(),
            error: None,
            dirty: false,
        };
        f.revalidate();
        f
    }

    pub fn with_hint(mut self, hint: &'static str) -> Self {
        self.hint = hint;
        self
    }

    /// The field holding a saved value: the caret after it, typing adds to it.
    pub fn with_text(mut self, text: &str) -> Self {
        self.set_text(text);
        self.dirty = false;
        self
    }

    /// The field holding a value the program suggests (today's date, the analyst's name):
    /// a one-line field shows it selected, so typing replaces it and a move keeps it.
    pub fn with_suggestion(mut self, text: &str) -> Self {
        self.suggest(text);
        self
    }

    /// Put a suggested value in the field (see `with_suggestion`); the field stays clean.
    pub fn suggest(&mut self, text: &str) {
        self.set_text(text);
        if !self.multi_line() {
            self.content = TextInput::prefilled(&self.text());
        }
        self.dirty = false;
    }

    /// Whether this field takes several lines (Enter adds a line instead of moving on).
    pub fn multi_line(&self) -> bool {
        matches!(self.kind, FieldKind::Readings { .. })
    }

    /// Replace the contents (user text is stripped of control sequences first).
    pub fn set_text(&mut self, text: &str) {
        let clean = shardlog_core::text::sanitize_for_terminal(text, self.multi_line());
        self.content = TextInput::new(&clean);
        self.dirty = true;
        self.revalidate();
    }

    /// The text as typed (lines joined with '\n').
    pub fn text(&self) -> String {
        self.content.lines().join("\n")
    }

    pub fn lines(&self) -> &[String] {
        self.content.lines()
    }

    /// Where the caret is: line and character position in the line.
    pub fn caret(&self) -> (usize, usize) {
        self.content.caret()
    }

    /// The selected part of the text, first and last position (line, character), if any.
    pub fn selection(&self) -> Option<((usize, usize), (usize, usize))> {
        self.content.selection()
    }

    pub fn error(&self) -> Option<&str> {
        self.error.as_deref()
    }

    pub fn is_dirty(&self) -> bool {
        self.dirty
    }

    pub fn mark_clean(&mut self) {
        self.dirty = false;
    }

    /// Feed one key. Returns true when the text changed. Control characters and escape
    /// sequences never reach the text: only printable characters are inserted.
    pub fn input(&mut self, press: KeyPress) -> bool {
        match press.key {
            Key::Enter if !self.multi_line() => return false,
            Key::Tab | Key::BackTab | Key::Esc => return false,
            Key::Char(c) if c.is_control() => return false,
            _ => {}
        }
        let changed = self.content.edit(press);
        if changed {
            self.dirty = true;
            self.revalidate();
        }
        changed
    }

    /// Insert pasted text, dropping control characters.
    pub fn paste(&mut self, text: &str) {
        let clean = shardlog_core::text::sanitize_for_terminal(text, self.multi_line());
        if self.content.insert_str(&clean) {
            self.dirty = true;
            self.revalidate();
        }
    }

    fn revalidate(&mut self) {
        self.error = validate(&self.kind, &self.text()).err();
    }

    /// The parsed value, or the reason it is refused (with the field's label).
    pub fn value(&self) -> Result<FieldValue, String> {
        validate(&self.kind, &self.text()).map_err(|e| format!("{}: {e}", self.label))
    }

    /// SI value of a quantity field, None when empty or invalid.
    pub fn quantity(&self) -> Option<f64> {
        match self.value() {
            Ok(FieldValue::Quantity(q)) => Some(q),
            _ => None,
        }
    }

    /// Readings of a readings field that parse; invalid lines are left out (their reason is
    /// in `error()`).
    pub fn readings(&self) -> Vec<f64> {
        let FieldKind::Readings { dim } = self.kind else {
            return Vec::new();
        };
        self.lines()
            .iter()
            .filter(|l| !l.trim().is_empty())
            .filter_map(|l| units::parse_positive(l, dim).ok())
            .collect()
    }
}

/// Whether line `row` of a readings field is refused.
pub fn line_error(f: &Field, row: usize) -> bool {
    let FieldKind::Readings { dim } = f.kind else {
        return false;
    };
    f.lines()
        .get(row)
        .is_some_and(|l| !l.trim().is_empty() && units::parse_positive(l, dim).is_err())
}

/// Validate `text` against `kind`.
pub fn validate(kind: &FieldKind, text: &str) -> Result<FieldValue, String> {
    let t = text.trim();
    match kind {
        FieldKind::Text { required } => {
            if t.is_empty() {
                if *required {
                    Err("required".to_string())
                } else {
                    Ok(FieldValue::Empty)
                }
            } else {
                Ok(FieldValue::Text(t.to_string()))
            }
        }
        FieldKind::Quantity {
            dim,
            positive,
            optional,
        } => {
            if t.is_empty() && *optional {
                return Ok(FieldValue::Empty);
            }
            let r = if *positive {
                units::parse_positive(t, *dim)
            } else {
                units::parse_non_negative(t, *dim)
            };
            r.map(FieldValue::Quantity).map_err(|e| e.to_string())
        }
        FieldKind::SignedQuantity { dim, optional } => {
            if t.is_empty() && *optional {
                return Ok(FieldValue::Empty);
            }
            units::parse(t, *dim)
                .map(FieldValue::Quantity)
                .map_err(|e| e.to_string())
        }
        FieldKind::Readings { dim } => {
            let mut out = Vec::new();
            for (i, line) in text.lines().enumerate() {
                if line.trim().is_empty() {
                    continue;
                }
                match units::parse_positive(line, *dim) {
                    Ok(v) => out.push(v),
                    Err(e) => return Err(format!("line {}: {e}", i + 1)),
                }
            }
            if out.is_empty() {
                Ok(FieldValue::Empty)
            } else {
                Ok(FieldValue::Readings(out))
            }
        }
        FieldKind::Date { optional } => {
            if t.is_empty() {
                return if *optional {
                    Ok(FieldValue::Empty)
                } else {
                    Err("required; expected a date such as 2027-03-14".to_string())
                };
            }
            chrono::NaiveDate::parse_from_str(t, "%Y-%m-%d")
                .map(FieldValue::Date)
                .map_err(|_| format!("'{t}' is not a date; expected YYYY-MM-DD such as 2027-03-14"))
        }
        FieldKind::Number { optional } => {
            if t.is_empty() && *optional {
                return Ok(FieldValue::Empty);
            }
            match units::parse_number(t) {
                Ok(x) if x > 0.0 => Ok(FieldValue::Number(x)),
                Ok(_) => Err(format!("'{t}' must be greater than zero")),
                Err(e) => Err(e.to_string()),
            }
        }
        FieldKind::Float { optional } => {
            if t.is_empty() && *optional {
                return Ok(FieldValue::Empty);
            }
            units::parse_number(&t.replace('−', "-"))
                .map(FieldValue::Number)
                .map_err(|e| e.to_string())
        }
        FieldKind::DateTime { optional } => {
            if t.is_empty() {
                return if *optional {
                    Ok(FieldValue::Empty)
                } else {
                    Err("required; expected a time such as 2027-03-14 09:10".to_string())
                };
            }
            chrono::NaiveDateTime::parse_from_str(t, "%Y-%m-%d %H:%M")
                .map(|d| FieldValue::DateTime(d.and_utc()))
                .map_err(|_| {
                    format!(
                        "'{t}' is not a time; expected YYYY-MM-DD HH:MM such as 2027-03-14 09:10"
                    )
                })
        }
        FieldKind::Count { optional } => {
            if t.is_empty() && *optional {
                return Ok(FieldValue::Empty);
            }
            t.parse::<u64>()
                .map(FieldValue::Count)
                .map_err(|_| format!("'{t}' is not a whole number; expected e.g. 40"))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn typed(f: &mut Field, s: &str) {
        for c in s.chars() {
            f.input(KeyPress::char(c));
        }
    }

    #[test]
    fn a_suggested_value_is_replaced_by_typing_and_a_saved_one_is_added_to() {
        let date = || Field::new("found_on", "Found on", FieldKind::Date { optional: false });
        let mut f = date().with_suggestion("2026-12-02");
        assert!(!f.is_dirty());
        typed(&mut f, "2026-11-30");
        assert_eq!(f.text(), "2026-11-30");
        assert_eq!(
            f.value(),
            Ok(FieldValue::Date(
                chrono::NaiveDate::from_ymd_opt(2026, 11, 30).unwrap()
            ))
        );
        let mut f = date().with_suggestion("2026-12-02");
        f.input(KeyPress::plain(Key::End));
        f.input(KeyPress::plain(Key::Backspace));
        typed(&mut f, "1");
        assert_eq!(f.text(), "2026-12-01");
        let mut f = Field::new("position", "Position", FieldKind::Text { required: false })
            .with_text("left side");
        typed(&mut f, ", bay 3");
        assert_eq!(f.text(), "left side, bay 3");
        // C-u clears a line
        f.input(KeyPress::ctrl(Key::Char('u')));
        assert_eq!(f.text(), "");
    }

    #[test]
    fn the_new_incident_form_suggests_today_and_typing_replaces_it() {
        let today = chrono::NaiveDate::from_ymd_opt(2026, 12, 2).unwrap();
        let mut form =
            crate::app::incident::new_form(today, &crate::app::incident::Lists::default());
        let f = form
            .field_mut("found_on")
            .expect("the form has a found-on field");
        assert_eq!(f.text(), "2026-12-02");
        typed(f, "2026-11-30");
        assert_eq!(f.text(), "2026-11-30");
    }

    #[test]
    fn quantity_validates_as_typed() {
        let mut f = Field::new(
            "t",
            "Thickness",
            FieldKind::Quantity {
                dim: Dimension::Length,
                positive: true,
                optional: false,
            },
        );
        assert!(f.error().is_some());
        typed(&mut f, "6");
        assert!(f.error().unwrap().contains("no unit"), "{:?}", f.error());
        typed(&mut f, " mm");
        assert_eq!(f.error(), None);
        assert!((f.quantity().unwrap() - 0.006).abs() < 1e-12);
    }

    #[test]
    fn readings_name_the_bad_line() {
        let mut f = Field::new(
            "r",
            "Mirror–mist radii",
            FieldKind::Readings {
                dim: Dimension::Length,
            },
        );
        f.set_text("1.0 mm\n1,1 mm\n0.9mm");
        let e = f.error().unwrap();
        assert!(e.starts_with("line 2:"), "{e}");
        assert!(e.contains("decimal comma"), "{e}");
        assert_eq!(f.readings().len(), 2);
    }

    #[test]
    fn control_characters_never_enter() {
        let mut f = Field::new("n", "Note", FieldKind::Text { required: false });
        f.paste("a\u{1b}[31mb\u{7}c");
        assert_eq!(f.text(), "abc");
        f.input(KeyPress::char('\u{1b}'));
        assert_eq!(f.text(), "abc");
    }

    #[test]
    fn dates() {
        assert!(validate(&FieldKind::Date { optional: false }, "2027-02-30").is_err());
        assert_eq!(
            validate(&FieldKind::Date { optional: true }, ""),
            Ok(FieldValue::Empty)
        );
        assert!(matches!(
            validate(&FieldKind::Date { optional: false }, "2027-03-14"),
            Ok(FieldValue::Date(_))
        ));
    }
}
