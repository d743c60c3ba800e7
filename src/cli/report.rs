//! `shardlog report` and `shardlog dispute` (not built yet).

use super::{CliError, Context};

#[derive(Debug, clap::Args)]
pub struct ReportArgs {}

pub fn report(_args: ReportArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'report' is not built yet"))
}

#[derive(Debug, clap::Args)]
pub struct DisputeArgs {}

pub fn dispute(_args: DisputeArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'dispute' is not built yet"))
}
