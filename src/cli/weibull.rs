//! `shardlog weibull` (not built yet: see the open issue).

use super::{CliError, Context};

#[derive(Debug, clap::Args)]
pub struct WeibullArgs {}

pub fn run(_args: WeibullArgs, _ctx: &mut Context<'_>) -> Result<(), CliError> {
    Err(CliError::work("'weibull' is not built yet"))
}
