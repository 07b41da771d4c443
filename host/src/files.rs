//! Files read with a bound on their size and written atomically.

use std::path::{Path, PathBuf};

use thiserror::Error;

/// Why a bounded text file could not be read (exit 2).
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum ReadError {
    /// The file could not be opened or read.
    #[error("{flag}: {}: cannot read: {why}", .path.display())]
    Cannot {
        /// The flag that names the file.
        flag: &'static str,
        /// The file.
        path: PathBuf,
        /// Why.
        why: std::io::Error,
    },
    /// The file is larger than allowed.
    #[error("{flag}: {}: larger than {max} bytes: allowed: a file of at most {max} bytes", .path.display())]
    TooLarge {
        /// The flag that names the file.
        flag: &'static str,
        /// The file.
        path: PathBuf,
        /// The most bytes allowed.
        max: u64,
    },
    /// The file is not UTF-8 text.
    #[error("{flag}: {}: not UTF-8 text (byte {at}): allowed: a UTF-8 text file", .path.display())]
    NotText {
        /// The flag that names the file.
        flag: &'static str,
        /// The file.
        path: PathBuf,
        /// Where the text stops being UTF-8, bytes from the start.
        at: usize,
    },
}

/// Read a text file of at most `max` bytes; `flag` names it in messages.
pub fn read_limited(path: &Path, max: u64, flag: &'static str) -> Result<String, ReadError> {
    use std::io::Read as _;
    let cannot = |why: std::io::Error| ReadError::Cannot {
        flag,
        path: path.to_path_buf(),
        why,
    };
    let file = std::fs::File::open(path).map_err(cannot)?;
    let mut bytes = Vec::new();
    file.take(max + 1).read_to_end(&mut bytes).map_err(cannot)?;
    if bytes.len() as u64 > max {
        return Err(ReadError::TooLarge {
            flag,
            path: path.to_path_buf(),
            max,
        });
    }
    String::from_utf8(bytes).map_err(|e| ReadError::NotText {
        flag,
        path: path.to_path_buf(),
        at: e.utf8_error().valid_up_to(),
    })
}

/// Write `bytes` to `path` atomically: a temporary file in the same directory, synced, then
/// renamed over `path` (the old file, if any, stays whole until the rename).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    use std::io::Write as _;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map_or_else(|| "file".into(), |n| n.to_string_lossy().into_owned());
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}
