//! Set-up shared by the integration tests.

pub mod audit;
pub mod fleet;
pub mod pty;
pub mod report;
