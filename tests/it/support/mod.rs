//! Set-up shared by the integration tests.

pub mod fleet;
pub mod pty;
pub mod report;
