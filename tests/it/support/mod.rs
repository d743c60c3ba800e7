//! Set-up shared by the integration tests.

pub mod pty;
pub mod report;
