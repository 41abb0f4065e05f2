//! Terminal output that stays quiet when the reader goes away.
//!
//! `std`'s `print!` family panics when a write fails, and Rust programs ignore SIGPIPE, so
//! `echobench check scenes/*.yaml | head -1` used to panic on the closed pipe. The macros
//! here shadow `print!`, `println!`, `eprint!` and `eprintln!` for the whole crate (they
//! are declared before any other module or function of `lib.rs`): a write that fails
//! with a broken pipe turns further output to that stream off, and the command goes on
//! to its usual end and exit status (a `run` still writes its folder). Any other write
//! error is ignored the same way: the terminal is not where results live.

use std::io::Write;
use std::sync::atomic::{AtomicBool, Ordering};

static STDOUT_CLOSED: AtomicBool = AtomicBool::new(false);
static STDERR_CLOSED: AtomicBool = AtomicBool::new(false);

/// Writes to standard output unless it was found closed.
pub fn to_stdout(args: std::fmt::Arguments<'_>, newline: bool) {
    if STDOUT_CLOSED.load(Ordering::Relaxed) {
        return;
    }
    let mut out = std::io::stdout().lock();
    let result = out
        .write_fmt(args)
        .and_then(|()| {
            if newline {
                out.write_all(b"\n")
            } else {
                Ok(())
            }
        })
        .and_then(|()| out.flush());
    if result.is_err() {
        STDOUT_CLOSED.store(true, Ordering::Relaxed);
    }
}

/// Writes to standard error unless it was found closed.
pub fn to_stderr(args: std::fmt::Arguments<'_>, newline: bool) {
    if STDERR_CLOSED.load(Ordering::Relaxed) {
        return;
    }
    let mut err = std::io::stderr().lock();
    let result = err.write_fmt(args).and_then(|()| {
        if newline {
            err.write_all(b"\n")
        } else {
            Ok(())
        }
    });
    if result.is_err() {
        STDERR_CLOSED.store(true, Ordering::Relaxed);
    }
}

/// `print!` that survives a closed pipe.
macro_rules! print {
    ($($arg:tt)*) => { $crate::output::to_stdout(format_args!($($arg)*), false) };
}

/// `println!` that survives a closed pipe.
macro_rules! println {
    () => { $crate::output::to_stdout(format_args!(""), true) };
    ($($arg:tt)*) => { $crate::output::to_stdout(format_args!($($arg)*), true) };
}

/// `eprint!` that survives a closed pipe.
macro_rules! eprint {
    ($($arg:tt)*) => { $crate::output::to_stderr(format_args!($($arg)*), false) };
}

/// `eprintln!` that survives a closed pipe.
macro_rules! eprintln {
    () => { $crate::output::to_stderr(format_args!(""), true) };
    ($($arg:tt)*) => { $crate::output::to_stderr(format_args!($($arg)*), true) };
}
