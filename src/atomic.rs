//! Atomic output: each file goes to a temporary file in the target folder and is renamed into
//! place, so that a failed run never leaves a partial file behind.

use std::io::Write;
use std::path::PathBuf;

use std::path::Path;

use crate::Error;

/// Write `bytes` to `path` atomically (see [`write_files_atomically`]).
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
    write_files_atomically(dir, &[(name, bytes.to_vec())])?;
    Ok(())
}

/// Write `(name, bytes)` files into `dir`. Each file goes to a hidden temp file in `dir` and is
/// renamed into place only after every temp file was written.
///
/// # Errors
/// [`crate::Error::Io`] naming the path; temp files, files renamed so far and a folder created
/// by this call are removed.
pub fn write_files_atomically(
    dir: &Path,
    files: &[(String, Vec<u8>)],
) -> Result<Vec<PathBuf>, crate::Error> {
    let created = !dir.exists();
    std::fs::create_dir_all(dir).map_err(|e| crate::Error::io(dir, e))?;
    let mut temps: Vec<(PathBuf, PathBuf)> = Vec::new();
    let cleanup = |temps: &[(PathBuf, PathBuf)], renamed: &[PathBuf]| {
        for (t, _) in temps {
            let _ = std::fs::remove_file(t);
        }
        for p in renamed {
            let _ = std::fs::remove_file(p);
        }
        if created {
            let _ = std::fs::remove_dir(dir);
        }
    };
    for (name, bytes) in files {
        let target = dir.join(name);
        let temp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
        let written = std::fs::File::create(&temp).and_then(|mut f| {
            f.write_all(bytes)?;
            f.sync_all()
        });
        temps.push((temp.clone(), target));
        if let Err(e) = written {
            cleanup(&temps, &[]);
            return Err(crate::Error::io(temp, e));
        }
    }
    let mut renamed = Vec::new();
    for (temp, target) in &temps {
        if let Err(e) = std::fs::rename(temp, target) {
            cleanup(&temps, &renamed);
            return Err(crate::Error::io(target, e));
        }
        renamed.push(target.clone());
    }
    Ok(renamed)
}
