//! One module per screen; each has `draw(app, frame, body, theme)`.

pub mod bench;
pub mod edit;
pub mod incident;
pub mod log;
