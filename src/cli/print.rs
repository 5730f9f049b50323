//! Printing to standard output without panicking when it is closed early (`lehr place
//! --json | head -c 10`): every line the commands print goes through [`outln!`], which
//! ends the program quietly with [`super::CLOSED_OUTPUT`] when the reader has gone.

use std::fmt;
use std::io::{ErrorKind, Write};

/// Writes one line to standard output. When the reader has closed it (a broken pipe),
/// ends the program quietly with [`super::CLOSED_OUTPUT`]; another write error ends it
/// with one line on standard error and code 1.
pub fn line(args: fmt::Arguments) {
    let mut out = std::io::stdout().lock();
    let written = out
        .write_fmt(args)
        .and_then(|()| out.write_all(b"\n"))
        .and_then(|()| out.flush());
    if let Err(e) = written {
        if e.kind() == ErrorKind::BrokenPipe {
            std::process::exit(i32::from(super::CLOSED_OUTPUT));
        }
        eprintln!("lehr: error: cannot write to standard output: {e}");
        std::process::exit(1);
    }
}

/// `println!` through [`line`]: a closed standard output ends the program quietly.
macro_rules! outln {
    ($($arg:tt)*) => {
        $crate::cli::print::line(format_args!($($arg)*))
    };
}

pub(crate) use outln;
