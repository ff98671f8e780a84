//! Checked standard output and output-path checks (docs/commands.md#exit-codes).
//!
//! `print!` panics when standard output is closed or full. Everything the commands print goes
//! through [`write`] instead: a closed pipe becomes an error that `main` turns into a quiet
//! exit 0 (as command-line tools do), a full device an error naming standard output (exit 1).

use std::io::Write;
use std::path::{Path, PathBuf};

use stemcast::Error;

/// What standard output is called in messages.
pub const STDOUT: &str = "standard output";

/// Write formatted text to standard output and flush it.
///
/// # Errors
/// [`Error::Io`] naming standard output.
pub fn write(args: std::fmt::Arguments) -> Result<(), Error> {
    let mut out = std::io::stdout().lock();
    out.write_fmt(args)
        .and_then(|()| out.flush())
        .map_err(|e| Error::io(STDOUT, e))
}

/// True when `e` is a write to a closed standard output (a reader such as `head` went away).
pub fn is_closed_stdout(e: &Error) -> bool {
    matches!(e, Error::Io { path, source }
        if path == Path::new(STDOUT) && source.kind() == std::io::ErrorKind::BrokenPipe)
}

/// Refuse an output path that names the same file as one of the inputs (it would be replaced
/// before anyone could notice).
///
/// # Errors
/// [`Error::Usage`] naming both.
pub fn distinct(out: &Path, inputs: &[&Path]) -> Result<(), Error> {
    let canonical = |p: &Path| -> Option<PathBuf> { p.canonicalize().ok() };
    let Some(o) = canonical(out) else {
        return Ok(()); // the output does not exist yet, so it is no input
    };
    for i in inputs {
        if canonical(i).as_ref() == Some(&o) {
            return Err(Error::Usage(format!(
                "the output {} is the input {}; choose another output path",
                out.display(),
                i.display()
            )));
        }
    }
    Ok(())
}

/// `print!` through [`write`], returning its error from the enclosing function.
macro_rules! out {
    ($($arg:tt)*) => {
        $crate::cli::out::write(format_args!($($arg)*))?
    };
}

/// `println!` through [`write`], returning its error from the enclosing function.
macro_rules! outln {
    () => {
        $crate::cli::out::write(format_args!("\n"))?
    };
    ($($arg:tt)*) => {
        $crate::cli::out::write(format_args!("{}\n", format_args!($($arg)*)))?
    };
}
