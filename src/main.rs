//! The `lehr` binary: the command-line interface and the window. Glue only: the work
//! lives in the library.

mod app;
mod bench;
mod cli;
mod copper_cmds;
mod export_cmd;
mod import_cmd;

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
