//! shardlog: fractography and breakage incident log.
//!
//! The core (`units`, `fracture`, `loads`, `fleet`) is pure: numbers in, numbers out.
//! `store` owns SQLite; `report` renders; `app` holds UI-agnostic state; `tui` draws it;
//! `cli` runs the subcommands.

pub mod app;
pub mod cli;
pub mod demo;
pub mod report;
pub mod store;
pub mod tui;
