//! The integration tests: one binary, one module per area, shared set-up in `support`.

mod support;

mod architecture;
mod concurrent;
mod crash;
mod faults;
mod fleet;
mod fleet_crash;
mod fleet_facts;
mod fleet_sync;
mod found_bugs;
mod fuzz_regressions;
mod hostile;
mod loads;
mod mirror_cli;
mod packaging;
mod readonly;
mod reference;
mod report_bundle;
mod report_render;
mod report_summary;
mod sql_text;
mod stats_cli;
mod store;
mod store_cli;
mod store_import;
mod store_tamper;
mod terminal_output;
mod tui;
mod tui_loads;
mod tui_pty;
mod tui_review;
mod tui_store;
mod weibull_cli;
