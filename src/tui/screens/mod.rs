//! One module per screen; each has `draw(app, frame, body, theme)`.

pub mod bench;
