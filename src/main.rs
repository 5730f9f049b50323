//! The `lehr` binary: the command-line interface and the window. Glue only: the work
//! lives in the library.
//!
//! Modules: `cli` (the commands) starts `app` (the window) for `lehr open`; both use
//! `shared` (the sample board, the export set), which uses neither.

mod app;
mod cli;
mod shared;

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
