//! The app's own key input: which key and which modifiers were held. The terminal layer
//! builds these from its events; the app never sees a terminal type.

/// A key on the keyboard.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum Key {
    /// A character key (the character as typed, Shift already applied).
    Char(char),
    /// A function key, F1 to F12.
    Function(u8),
    Enter,
    Backspace,
    Delete,
    Left,
    Right,
    Up,
    Down,
    Home,
    End,
    PageUp,
    PageDown,
    Tab,
    /// Shift-Tab.
    BackTab,
    Esc,
    /// A key the app has no use for.
    #[default]
    Other,
}

/// One key press with the modifiers held.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct KeyPress {
    pub key: Key,
    pub ctrl: bool,
    pub alt: bool,
    pub shift: bool,
}

impl KeyPress {
    /// The key with no modifier held.
    pub const fn plain(key: Key) -> Self {
        KeyPress {
            key,
            ctrl: false,
            alt: false,
            shift: false,
        }
    }

    /// A typed character with no modifier held.
    pub const fn char(c: char) -> Self {
        KeyPress::plain(Key::Char(c))
    }

    /// The key with Ctrl held.
    pub const fn ctrl(key: Key) -> Self {
        KeyPress {
            key,
            ctrl: true,
            alt: false,
            shift: false,
        }
    }

    /// The key with Alt held.
    pub const fn alt(key: Key) -> Self {
        KeyPress {
            key,
            ctrl: false,
            alt: true,
            shift: false,
        }
    }
}
