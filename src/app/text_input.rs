//! The text of an input and its caret, with the edits a form field supports: typing,
//! Backspace and Delete, moving by character, line, word and to either end of a line or of
//! the text, a new line (multi-line fields only: the field decides), deleting a word, the
//! rest of a line or the whole line, a selection made with Shift, cutting, copying and
//! putting back what was cut, undo and redo, and pasting.
//!
//! The keys follow the common terminal editing keys (the table is [`EDITING_KEYS`], which the
//! help screen shows).

use super::key::{Key, KeyPress};

/// The editing keys of every text field, for the help screen: (keys, what they do).
pub const EDITING_KEYS: &[(&str, &str)] = &[
    ("←→ C-b C-f", "move by character (↑↓ C-p C-n by line)"),
    ("C-← C-→", "move by word (also Alt-b, Alt-f)"),
    ("Home End", "start or end of the line (also C-a, C-e)"),
    ("C-Home C-End", "start or end of the text"),
    ("Shift+move", "select; typing replaces the selection"),
    (
        "C-w Alt-⌫",
        "cut the word before the caret (Alt-d: the word after)",
    ),
    ("C-k", "cut the rest of the line"),
    ("C-u", "cut the whole line"),
    ("C-x Alt-w", "cut or copy the selection"),
    ("C-y", "put back what was cut or copied last"),
    ("C-z C-r", "undo, redo"),
];

/// How many edits undo can take back.
const UNDO_DEPTH: usize = 200;

/// The text and caret before an edit, for undo and redo.
#[derive(Debug, Clone, PartialEq, Eq)]
struct Snapshot {
    lines: Vec<String>,
    row: usize,
    col: usize,
}

/// Lines of text (never none), a caret at a line and a character position in it, and an
/// optional selection from an anchor to the caret.
///
/// A value given to a field before the user types (a default or a saved value) starts
/// selected whole, so typing replaces it and an arrow key keeps it: see [`TextInput::prefilled`].
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TextInput {
    lines: Vec<String>,
    row: usize,
    col: usize,
    anchor: Option<(usize, usize)>,
    undo: Vec<Snapshot>,
    redo: Vec<Snapshot>,
    /// What was cut or copied last (C-y puts it back).
    clipboard: String,
    /// The last change was typing a character that is not a space: the next one joins its
    /// undo step, so undo takes back a word at a time.
    typing: bool,
}

impl Default for TextInput {
    fn default() -> Self {
        TextInput {
            lines: vec![String::new()],
            row: 0,
            col: 0,
            anchor: None,
            undo: Vec::new(),
            redo: Vec::new(),
            clipboard: String::new(),
            typing: false,
        }
    }
}

/// What kind of character: words are runs of one kind (spaces separate them).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum CharKind {
    Space,
    Punctuation,
    Word,
}

fn kind_of(c: char) -> CharKind {
    if c.is_whitespace() {
        CharKind::Space
    } else if c != '_' && c.is_ascii_punctuation() {
        CharKind::Punctuation
    } else {
        CharKind::Word
    }
}

fn char_count(s: &str) -> usize {
    s.chars().count()
}

/// Byte offset of character `col` in `s` (the end when `col` is past it).
fn byte_at(s: &str, col: usize) -> usize {
    s.char_indices().nth(col).map_or(s.len(), |(i, _)| i)
}

/// The start of the next word after `col`, if the line has one.
fn next_word_start(line: &str, col: usize) -> Option<usize> {
    let chars: Vec<char> = line.chars().collect();
    let mut at = col;
    let first = kind_of(*chars.get(at)?);
    while at < chars.len() && kind_of(chars[at]) == first {
        at += 1;
    }
    while at < chars.len() && kind_of(chars[at]) == CharKind::Space {
        at += 1;
    }
    (at < chars.len()).then_some(at)
}

/// The start of the word before `col`, if there is one on the line.
fn previous_word_start(line: &str, col: usize) -> Option<usize> {
    let chars: Vec<char> = line.chars().take(col).collect();
    let mut at = chars.len();
    while at > 0 && kind_of(chars[at - 1]) == CharKind::Space {
        at -= 1;
    }
    if at == 0 {
        return None;
    }
    let kind = kind_of(chars[at - 1]);
    while at > 0 && kind_of(chars[at - 1]) == kind {
        at -= 1;
    }
    Some(at)
}

impl TextInput {
    /// `text` split into lines, the caret at its very end.
    pub fn new(text: &str) -> Self {
        let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
        if lines.is_empty() {
            lines.push(String::new());
        }
        let row = lines.len() - 1;
        let col = char_count(&lines[row]);
        TextInput {
            lines,
            row,
            col,
            ..TextInput::default()
        }
    }

    /// `text` selected whole, the caret at its end: typing replaces it, a move keeps it.
    pub fn prefilled(text: &str) -> Self {
        let mut t = TextInput::new(text);
        if !text.is_empty() {
            t.anchor = Some((0, 0));
        }
        t
    }

    /// The selection, first position then last (line, character), when there is one and it
    /// is not empty.
    pub fn selection(&self) -> Option<((usize, usize), (usize, usize))> {
        let anchor = self.anchor?;
        let caret = (self.row, self.col);
        match anchor.cmp(&caret) {
            std::cmp::Ordering::Less => Some((anchor, caret)),
            std::cmp::Ordering::Greater => Some((caret, anchor)),
            std::cmp::Ordering::Equal => None,
        }
    }

    pub fn lines(&self) -> &[String] {
        &self.lines
    }

    /// The caret: line and character position in the line.
    pub fn caret(&self) -> (usize, usize) {
        (self.row, self.col)
    }

    fn line(&self) -> &str {
        &self.lines[self.row]
    }

    fn line_len(&self) -> usize {
        char_count(self.line())
    }

    /// Apply one key. Returns true when the text changed (moving the caret is no change).
    pub fn edit(&mut self, press: KeyPress) -> bool {
        let KeyPress {
            key,
            ctrl,
            alt,
            shift,
        } = press;
        match (key, ctrl, alt) {
            (Key::Char('z'), true, false) => return self.step_back(),
            (Key::Char('r'), true, false) => return self.step_forward(),
            (Key::Char('w'), false, true) => {
                self.copy_selection();
                return false;
            }
            _ => {}
        }
        if self.is_move(key, ctrl, alt) {
            // Shift on a character key is part of the character; on a move it selects
            if shift {
                self.anchor.get_or_insert((self.row, self.col));
            } else {
                self.anchor = None;
            }
            self.typing = false;
            self.move_caret(key, ctrl, alt);
            return false;
        }
        let typed = matches!((key, ctrl, alt), (Key::Char(c), false, false) if !c.is_whitespace());
        let before = self.snapshot();
        let changed = self.change(key, ctrl, alt);
        if changed {
            if !(typed && self.typing) {
                self.remember(before);
            }
            self.redo.clear();
        }
        self.typing = changed && typed;
        changed
    }

    /// Whether the key only moves the caret.
    fn is_move(&self, key: Key, ctrl: bool, alt: bool) -> bool {
        matches!(
            (key, ctrl, alt),
            (
                Key::Left | Key::Right | Key::Up | Key::Down | Key::Home | Key::End,
                _,
                false
            ) | (Key::Char('a' | 'e' | 'b' | 'f' | 'p' | 'n'), true, false)
                | (Key::Char('b' | 'f'), false, true)
        )
    }

    /// The edits that change the text. With a selection, typing and the deleting keys act
    /// on the selection.
    fn change(&mut self, key: Key, ctrl: bool, alt: bool) -> bool {
        match (key, ctrl, alt) {
            (Key::Char('x'), true, false) => return self.cut_selection(),
            (Key::Char('y'), true, false) => {
                let text = self.clipboard.clone();
                self.delete_selection();
                return self.insert_str_here(&text);
            }
            (Key::Char('u'), true, false) => return self.cut_line(),
            _ => {}
        }
        if self.selection().is_some() {
            match (key, ctrl, alt) {
                (Key::Char(_) | Key::Enter, false, false) => {
                    self.delete_selection();
                }
                (Key::Backspace | Key::Delete, _, _) | (Key::Char('h' | 'd'), true, false) => {
                    return self.delete_selection();
                }
                _ => {}
            }
        }
        self.anchor = None;
        match (key, ctrl, alt) {
            (Key::Char(c), false, false) => self.insert_char(c),
            (Key::Enter, _, _) => self.insert_newline(),
            (Key::Backspace, false, false) | (Key::Char('h'), true, false) => self.delete_before(),
            (Key::Delete, false, false) | (Key::Char('d'), true, false) => self.delete_after(),
            (Key::Backspace, false, true)
            | (Key::Char('w'), true, false)
            | (Key::Char('h'), false, true) => self.delete_word_before(),
            (Key::Delete, false, true) | (Key::Char('d'), false, true) => self.delete_word_after(),
            (Key::Char('k'), true, false) => self.delete_to_end(),
            _ => false,
        }
    }

    fn move_caret(&mut self, key: Key, ctrl: bool, alt: bool) {
        match (key, ctrl, alt) {
            (Key::Left, false, false) | (Key::Char('b'), true, false) => self.back(),
            (Key::Right, false, false) | (Key::Char('f'), true, false) => self.forward(),
            (Key::Up, false, false) | (Key::Char('p'), true, false) => self.up(),
            (Key::Down, false, false) | (Key::Char('n'), true, false) => self.down(),
            (Key::Home, true, _) => (self.row, self.col) = (0, 0),
            (Key::End, true, _) => {
                self.row = self.lines.len() - 1;
                self.col = self.line_len();
            }
            (Key::Home, false, _) | (Key::Char('a'), true, false) => self.col = 0,
            (Key::End, false, _) | (Key::Char('e'), true, false) => self.col = self.line_len(),
            (Key::Left, true, false) | (Key::Char('b'), false, true) => self.word_back(),
            (Key::Right, true, false) | (Key::Char('f'), false, true) => self.word_forward(),
            _ => {}
        }
    }

    fn snapshot(&self) -> Snapshot {
        Snapshot {
            lines: self.lines.clone(),
            row: self.row,
            col: self.col,
        }
    }

    fn restore(&mut self, s: Snapshot) {
        self.lines = s.lines;
        self.row = s.row;
        self.col = s.col;
        self.anchor = None;
        self.typing = false;
    }

    fn remember(&mut self, before: Snapshot) {
        if self.undo.len() == UNDO_DEPTH {
            self.undo.remove(0);
        }
        self.undo.push(before);
    }

    /// Undo the last change (C-z). Returns true when the text changed.
    fn step_back(&mut self) -> bool {
        let Some(before) = self.undo.pop() else {
            return false;
        };
        self.redo.push(self.snapshot());
        self.restore(before);
        true
    }

    /// Redo what undo took back (C-r).
    fn step_forward(&mut self) -> bool {
        let Some(after) = self.redo.pop() else {
            return false;
        };
        self.undo.push(self.snapshot());
        self.restore(after);
        true
    }

    /// The selected text (lines joined with '\n').
    pub fn selected_text(&self) -> Option<String> {
        let ((r0, c0), (r1, c1)) = self.selection()?;
        if r0 == r1 {
            let line = &self.lines[r0];
            return Some(line[byte_at(line, c0)..byte_at(line, c1)].to_string());
        }
        let first = &self.lines[r0];
        let last = &self.lines[r1];
        let mut parts = vec![first[byte_at(first, c0)..].to_string()];
        parts.extend(self.lines[r0 + 1..r1].iter().cloned());
        parts.push(last[..byte_at(last, c1)].to_string());
        Some(parts.join("\n"))
    }

    fn copy_selection(&mut self) {
        if let Some(text) = self.selected_text() {
            self.clipboard = text;
        }
    }

    fn cut_selection(&mut self) -> bool {
        self.copy_selection();
        self.delete_selection()
    }

    /// Remove the selected text and put the caret where it began.
    fn delete_selection(&mut self) -> bool {
        let Some(((r0, c0), (r1, c1))) = self.selection() else {
            self.anchor = None;
            return false;
        };
        let tail = {
            let last = &self.lines[r1];
            last[byte_at(last, c1)..].to_string()
        };
        let first = &mut self.lines[r0];
        first.truncate(byte_at(first, c0));
        first.push_str(&tail);
        self.lines.drain(r0 + 1..=r1);
        (self.row, self.col) = (r0, c0);
        self.anchor = None;
        true
    }

    /// Cut the caret's whole line (C-u): a one-line field is left empty.
    fn cut_line(&mut self) -> bool {
        self.anchor = None;
        if self.line().is_empty() {
            return false;
        }
        self.clipboard = std::mem::take(&mut self.lines[self.row]);
        self.col = 0;
        true
    }

    fn back(&mut self) {
        if self.col > 0 {
            self.col -= 1;
        } else if self.row > 0 {
            self.row -= 1;
            self.col = self.line_len();
        }
    }

    fn forward(&mut self) {
        if self.col < self.line_len() {
            self.col += 1;
        } else if self.row + 1 < self.lines.len() {
            self.row += 1;
            self.col = 0;
        }
    }

    fn up(&mut self) {
        if self.row > 0 {
            self.row -= 1;
            self.col = self.col.min(self.line_len());
        }
    }

    fn down(&mut self) {
        if self.row + 1 < self.lines.len() {
            self.row += 1;
            self.col = self.col.min(self.line_len());
        }
    }

    fn word_forward(&mut self) {
        if let Some(col) = next_word_start(self.line(), self.col) {
            self.col = col;
        } else if self.row + 1 < self.lines.len() {
            self.row += 1;
            self.col = 0;
        } else {
            self.col = self.line_len();
        }
    }

    fn word_back(&mut self) {
        if let Some(col) = previous_word_start(self.line(), self.col) {
            self.col = col;
        } else if self.col > 0 {
            self.col = 0;
        } else if self.row > 0 {
            self.row -= 1;
            self.col = self.line_len();
        }
    }

    fn insert_char(&mut self, c: char) -> bool {
        let at = byte_at(self.line(), self.col);
        self.lines[self.row].insert(at, c);
        self.col += 1;
        true
    }

    fn insert_newline(&mut self) -> bool {
        let at = byte_at(self.line(), self.col);
        let rest = self.lines[self.row].split_off(at);
        self.lines.insert(self.row + 1, rest);
        self.row += 1;
        self.col = 0;
        true
    }

    /// Insert pasted `text` at the caret, in place of the selection if there is one (a '\n'
    /// starts a new line; a '\r' before it is dropped). One undo step.
    pub fn insert_str(&mut self, text: &str) -> bool {
        if text.is_empty() {
            return false;
        }
        let before = self.snapshot();
        self.delete_selection();
        self.insert_str_here(text);
        self.remember(before);
        self.redo.clear();
        self.typing = false;
        true
    }

    fn insert_str_here(&mut self, text: &str) -> bool {
        if text.is_empty() {
            return false;
        }
        for (i, piece) in text.split('\n').enumerate() {
            if i > 0 {
                self.insert_newline();
            }
            let piece = piece.strip_suffix('\r').unwrap_or(piece);
            let at = byte_at(self.line(), self.col);
            self.lines[self.row].insert_str(at, piece);
            self.col += char_count(piece);
        }
        true
    }

    /// Remove characters `from..to` of the caret's line and put the caret at `from`.
    fn delete_range(&mut self, from: usize, to: usize) -> bool {
        if from >= to {
            return false;
        }
        let line = &mut self.lines[self.row];
        let (a, b) = (byte_at(line, from), byte_at(line, to));
        line.replace_range(a..b, "");
        self.col = from;
        true
    }

    /// Join the caret's line with the one before it.
    fn join_previous(&mut self) -> bool {
        if self.row == 0 {
            return false;
        }
        let line = self.lines.remove(self.row);
        self.row -= 1;
        self.col = self.line_len();
        self.lines[self.row].push_str(&line);
        true
    }

    /// Join the next line onto the caret's line.
    fn join_next(&mut self) -> bool {
        if self.row + 1 >= self.lines.len() {
            return false;
        }
        let next = self.lines.remove(self.row + 1);
        self.lines[self.row].push_str(&next);
        true
    }

    fn delete_before(&mut self) -> bool {
        if self.col == 0 {
            return self.join_previous();
        }
        self.delete_range(self.col - 1, self.col)
    }

    fn delete_after(&mut self) -> bool {
        if self.col >= self.line_len() {
            return self.join_next();
        }
        self.delete_range(self.col, self.col + 1)
    }

    fn delete_word_before(&mut self) -> bool {
        if self.col == 0 {
            return self.join_previous();
        }
        let from = previous_word_start(self.line(), self.col).unwrap_or(0);
        self.cut_range(from, self.col)
    }

    fn delete_word_after(&mut self) -> bool {
        let len = self.line_len();
        if self.col >= len {
            return self.join_next();
        }
        let chars: Vec<char> = self.line().chars().collect();
        let mut to = self.col;
        while to < len && kind_of(chars[to]) == CharKind::Space {
            to += 1;
        }
        if to < len {
            let kind = kind_of(chars[to]);
            while to < len && kind_of(chars[to]) == kind {
                to += 1;
            }
        }
        self.cut_range(self.col, to)
    }

    fn delete_to_end(&mut self) -> bool {
        if self.col >= self.line_len() {
            return self.join_next();
        }
        self.cut_range(self.col, self.line_len())
    }

    /// Like `delete_range`, keeping what was removed for C-y.
    fn cut_range(&mut self, from: usize, to: usize) -> bool {
        let line = self.line();
        if from < to {
            self.clipboard = line[byte_at(line, from)..byte_at(line, to)].to_string();
        }
        self.delete_range(from, to)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn typed(t: &mut TextInput, s: &str) {
        for c in s.chars() {
            t.edit(KeyPress::char(c));
        }
    }

    #[test]
    fn typing_moving_and_deleting() {
        let mut t = TextInput::default();
        typed(&mut t, "1.0 mm");
        assert_eq!(t.lines(), ["1.0 mm"]);
        t.edit(KeyPress::plain(Key::Home));
        t.edit(KeyPress::plain(Key::Delete));
        typed(&mut t, "2");
        assert_eq!(t.lines(), ["2.0 mm"]);
        t.edit(KeyPress::plain(Key::End));
        t.edit(KeyPress::plain(Key::Backspace));
        t.edit(KeyPress::plain(Key::Backspace));
        typed(&mut t, "µm");
        assert_eq!(t.lines(), ["2.0 µm"]);
        assert_eq!(t.caret(), (0, 6));
        t.edit(KeyPress::ctrl(Key::Char('w')));
        assert_eq!(t.lines(), ["2.0 "]);
        t.edit(KeyPress::ctrl(Key::Left));
        assert_eq!(t.caret(), (0, 2));
        t.edit(KeyPress::ctrl(Key::Char('k')));
        assert_eq!(t.lines(), ["2."]);
    }

    #[test]
    fn lines_split_and_join() {
        let mut t = TextInput::new("1 mm");
        t.edit(KeyPress::plain(Key::Enter));
        typed(&mut t, "2 mm");
        assert_eq!(t.lines(), ["1 mm", "2 mm"]);
        t.edit(KeyPress::plain(Key::Home));
        t.edit(KeyPress::plain(Key::Backspace));
        assert_eq!(t.lines(), ["1 mm2 mm"]);
        assert_eq!(t.caret(), (0, 4));
        assert!(t.insert_str("\r\n3 mm\r\n"));
        assert_eq!(t.lines(), ["1 mm", "3 mm", "2 mm"]);
        t.edit(KeyPress::plain(Key::Up));
        t.edit(KeyPress::plain(Key::End));
        t.edit(KeyPress::plain(Key::Delete));
        assert_eq!(t.lines(), ["1 mm", "3 mm2 mm"]);
    }

    #[test]
    fn words_are_runs_of_one_kind() {
        let mut t = TextInput::new("ab, cd");
        t.edit(KeyPress::plain(Key::Home));
        t.edit(KeyPress::alt(Key::Char('f')));
        assert_eq!(t.caret(), (0, 2));
        t.edit(KeyPress::alt(Key::Char('f')));
        assert_eq!(t.caret(), (0, 4));
        t.edit(KeyPress::alt(Key::Char('f')));
        assert_eq!(t.caret(), (0, 6));
        t.edit(KeyPress::alt(Key::Char('b')));
        assert_eq!(t.caret(), (0, 4));
        t.edit(KeyPress::plain(Key::Home));
        t.edit(KeyPress::alt(Key::Char('d')));
        assert_eq!(t.lines(), [", cd"]);
    }

    fn shift(key: Key) -> KeyPress {
        KeyPress {
            shift: true,
            ..KeyPress::plain(key)
        }
    }

    #[test]
    fn a_prefilled_value_is_replaced_by_typing_and_kept_by_a_move() {
        let mut t = TextInput::prefilled("2026-12-02");
        typed(&mut t, "2026-11-30");
        assert_eq!(t.lines(), ["2026-11-30"]);
        let mut t = TextInput::prefilled("2026-12-02");
        t.edit(KeyPress::plain(Key::End));
        assert_eq!(t.selection(), None);
        t.edit(KeyPress::plain(Key::Backspace));
        typed(&mut t, "3");
        assert_eq!(t.lines(), ["2026-12-03"]);
    }

    #[test]
    fn shift_selects_and_typing_or_deleting_replaces_the_selection() {
        let mut t = TextInput::new("850 um");
        t.edit(shift(Key::Left));
        t.edit(shift(Key::Left));
        assert_eq!(t.selected_text().as_deref(), Some("um"));
        typed(&mut t, "µm");
        assert_eq!(t.lines(), ["850 µm"]);
        t.edit(KeyPress::plain(Key::Home));
        t.edit(KeyPress {
            ctrl: true,
            ..shift(Key::Right)
        });
        assert_eq!(t.selected_text().as_deref(), Some("850 "));
        t.edit(KeyPress::plain(Key::Delete));
        assert_eq!(t.lines(), ["µm"]);
        // across lines
        let mut t = TextInput::new("1 mm\n2 mm\n3 mm");
        t.edit(KeyPress::plain(Key::Up));
        t.edit(KeyPress::plain(Key::Home));
        t.edit(shift(Key::Down));
        assert_eq!(t.selected_text().as_deref(), Some("2 mm\n"));
        t.edit(KeyPress::plain(Key::Backspace));
        assert_eq!(t.lines(), ["1 mm", "3 mm"]);
    }

    #[test]
    fn cut_copy_and_put_back() {
        let mut t = TextInput::new("left side, bay 3");
        t.edit(KeyPress::ctrl(Key::Char('w')));
        assert_eq!(t.lines(), ["left side, bay "]);
        t.edit(KeyPress::plain(Key::Home));
        t.edit(KeyPress::ctrl(Key::Char('y')));
        assert_eq!(t.lines(), ["3left side, bay "]);
        t.edit(KeyPress::ctrl(Key::Char('u')));
        assert_eq!(t.lines(), [""]);
        t.edit(KeyPress::ctrl(Key::Char('y')));
        assert_eq!(t.lines(), ["3left side, bay "]);
        t.edit(KeyPress::plain(Key::Home));
        t.edit(shift(Key::Right));
        t.edit(KeyPress::ctrl(Key::Char('x')));
        assert_eq!(t.lines(), ["left side, bay "]);
        t.edit(KeyPress::plain(Key::End));
        t.edit(KeyPress::ctrl(Key::Char('y')));
        assert_eq!(t.lines(), ["left side, bay 3"]);
        t.edit(KeyPress::plain(Key::Home));
        t.edit(shift(Key::End));
        assert!(
            !t.edit(KeyPress::alt(Key::Char('w'))),
            "copying changes nothing"
        );
        t.edit(KeyPress::plain(Key::End));
        t.edit(KeyPress::ctrl(Key::Char('y')));
        assert_eq!(t.lines(), ["left side, bay 3left side, bay 3"]);
    }

    #[test]
    fn undo_takes_back_a_word_at_a_time_and_redo_puts_it_again() {
        let mut t = TextInput::default();
        typed(&mut t, "sunny afternoon");
        t.edit(KeyPress::ctrl(Key::Char('z')));
        assert_eq!(t.lines(), ["sunny "]);
        t.edit(KeyPress::ctrl(Key::Char('z')));
        assert_eq!(t.lines(), ["sunny"]);
        t.edit(KeyPress::ctrl(Key::Char('z')));
        assert_eq!(t.lines(), [""]);
        assert!(
            !t.edit(KeyPress::ctrl(Key::Char('z'))),
            "nothing left to undo"
        );
        t.edit(KeyPress::ctrl(Key::Char('r')));
        t.edit(KeyPress::ctrl(Key::Char('r')));
        assert_eq!(t.lines(), ["sunny "]);
        // a new change ends redo
        typed(&mut t, "x");
        assert!(!t.edit(KeyPress::ctrl(Key::Char('r'))));
        // a replaced prefilled value comes back with one undo
        let mut t = TextInput::prefilled("analyst");
        typed(&mut t, "dana");
        t.edit(KeyPress::ctrl(Key::Char('z')));
        assert_eq!(t.lines(), ["analyst"]);
    }

    #[test]
    fn control_home_and_end_go_to_either_end_of_the_text() {
        let mut t = TextInput::new("1 mm\n2 mm\n3 mm");
        t.edit(KeyPress::ctrl(Key::Home));
        assert_eq!(t.caret(), (0, 0));
        t.edit(KeyPress::ctrl(Key::End));
        assert_eq!(t.caret(), (2, 4));
    }
}
