//! One module per screen; each has `draw(app, frame, body, theme)`.

pub mod bench;
pub mod edit;
pub mod hypothesis;
pub mod incident;
pub mod log;
pub mod lookups;
pub mod materials;
pub mod review;
pub mod review_soak;
