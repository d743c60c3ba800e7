//! The text of an input and its caret, with the edits a form field supports: typing,
//! Backspace and Delete, moving by character, line, word and to either end of a line, a new
//! line (multi-line fields only: the field decides), deleting a word or the rest of a line,
//! and pasting.
//!
//! The keys follow the common terminal editing keys: Ctrl-A/E to the start and end of a line,
//! Ctrl-B/F/P/N as the arrows, Ctrl-Left/Right and Alt-B/F by word, Ctrl-W and Alt-Backspace
//! delete the word before the caret, Alt-D the word after it, Ctrl-K the rest of the line.

use super::key::{Key, KeyPress};

/// Lines of text (never none) and a caret at a line and a character position in it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TextInput {
    lines: Vec<String>,
    row: usize,
    col: usize,
}

impl Default for TextInput {
    fn default() -> Self {
        TextInput {
            lines: vec![String::new()],
            row: 0,
            col: 0,
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
        TextInput { lines, row, col }
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
        let KeyPress { key, ctrl, alt, .. } = press;
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
            _ => {
                self.move_caret(key, ctrl, alt);
                false
            }
        }
    }

    fn move_caret(&mut self, key: Key, ctrl: bool, alt: bool) {
        match (key, ctrl, alt) {
            (Key::Left, false, false) | (Key::Char('b'), true, false) => self.back(),
            (Key::Right, false, false) | (Key::Char('f'), true, false) => self.forward(),
            (Key::Up, false, false) | (Key::Char('p'), true, false) => self.up(),
            (Key::Down, false, false) | (Key::Char('n'), true, false) => self.down(),
            (Key::Home, _, _) | (Key::Char('a'), true, false) => self.col = 0,
            (Key::End, _, _) | (Key::Char('e'), true, false) => self.col = self.line_len(),
            (Key::Left, true, false) | (Key::Char('b'), false, true) => self.word_back(),
            (Key::Right, true, false) | (Key::Char('f'), false, true) => self.word_forward(),
            _ => {}
        }
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

    /// Insert `text` at the caret (a '\n' starts a new line; a '\r' before it is dropped).
    pub fn insert_str(&mut self, text: &str) -> bool {
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
        self.delete_range(from, self.col)
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
        self.delete_range(self.col, to)
    }

    fn delete_to_end(&mut self) -> bool {
        if self.col >= self.line_len() {
            return self.join_next();
        }
        self.delete_range(self.col, self.line_len())
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
}
