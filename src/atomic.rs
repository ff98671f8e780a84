//! Atomic file output: write to a temporary file in the target folder, then rename, so that a
//! failed run never leaves a partial file behind.

use std::io::Write;
use std::path::Path;

use crate::Error;

/// Write `bytes` to `path` atomically (temporary file in the same folder, then rename).
///
/// # Errors
/// [`Error::Io`] naming the path when the folder does not exist or cannot be written.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), Error> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::io(path, e));
    }
    Ok(())
}
