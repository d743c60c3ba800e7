//! shardlog-core: the pure part of shardlog. Numbers and text in, numbers and text out.
//!
//! No file, no clock, no database, no terminal: "now" and random seeds are passed in by the
//! caller. Every other crate of the workspace builds on this one; this one builds on none of
//! them (`tests/it/architecture.rs` checks it).
//!
//! - [`canonical`]: canonical JSON and SHA-256, the proof that a record or document is unchanged.
//! - [`units`]: quantities with units (SI inside, units at the edges).
//! - [`text`]: user text made safe to show, widths, padding, a stress with its unit.
//! - [`fracture`]: mirror-constant relation, residual stress, flaw size, the material library.
//! - [`loads`]: service-load hypotheses (impact, contact, plates, thermal, critical flaw).
//! - [`fleet`]: grouping, exposure, rates, trends, Weibull fits, the statistics query.

pub mod canonical;
pub mod fleet;
pub mod fracture;
pub mod loads;
pub mod text;
pub mod units;
