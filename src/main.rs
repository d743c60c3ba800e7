//! The binary: parse arguments, dispatch, map errors to exit codes. Nothing else.

use std::process::ExitCode;

fn main() -> ExitCode {
    let code = shardlog::cli::main_with_args(std::env::args_os());
    ExitCode::from(code)
}
