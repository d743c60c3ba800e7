//! Set-up shared by the integration tests.

#![allow(dead_code)]

pub mod fleet;
pub mod pty;
pub mod report;
