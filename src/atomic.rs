//! Atomic output of a single file: a temporary file in the target folder, then a rename, so
//! that a failed run never leaves a partial file behind.

use std::path::Path;

use crate::Error;

/// Write `bytes` to `path` atomically (see [`crate::report::write_files_atomically`]).
///
/// # Errors
/// [`Error::Io`] naming the path when the folder cannot be created or written.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), Error> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .ok_or_else(|| Error::Usage(format!("{}: not a file name", path.display())))?;
    crate::report::write_files_atomically(dir, &[(name, bytes.to_vec())])?;
    Ok(())
}
