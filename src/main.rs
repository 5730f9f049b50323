//! The `lehr` binary: command-line interface (and, later, the window). Glue only: the
//! work lives in the library.

mod bench;
mod cli;
mod copper_cmds;

use std::process::ExitCode;

fn main() -> ExitCode {
    match cli::run() {
        Ok(code) => code,
        Err(e) => {
            eprintln!("lehr: error: {e:#}");
            ExitCode::from(1)
        }
    }
}
