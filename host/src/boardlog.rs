//! The board log: append-only JSON Lines, one complete record per line.
//!
//! Each record is serialised to one line and written with a single `write_all` of the whole line
//! (newline included). If the write fails (a full disk), the file is cut back to its length
//! before the write, so no partial record stays behind. A record starts on a fresh line after a
//! torn tail (a power cut), so it is never merged with the torn one. On reading, a line that is
//! not a complete JSON object is skipped with a warning naming its line number; lines are read
//! one at a time (bounded memory) and a line longer than [`MAX_LINE`] is skipped whole.

use std::collections::HashSet;
use std::fs::{File, OpenOptions};
use std::io::{BufRead, BufReader, Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use serde::Serialize;
use serde_json::Value;
use thiserror::Error;

pub use crate::clock::now_utc;

/// The longest log line read, bytes (a record is a few kilobytes).
pub const MAX_LINE: usize = 1 << 20;

/// Records appended between two syncs to the disk by an [`Appender`] (a power cut loses at most
/// these; a killed process loses none, every record is written whole before the next).
pub const SYNC_EVERY: usize = 256;

/// Why the log could not be written or read.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum LogError {
    /// The file could not be opened.
    #[error("{path}: cannot open the log: {source}")]
    Open {
        /// The log.
        path: PathBuf,
        /// Why.
        source: std::io::Error,
    },
    /// A record could not be written whole (a full disk?); nothing of it was kept.
    #[error("{path}: cannot write the record (nothing of it was kept): {source}")]
    Write {
        /// The log.
        path: PathBuf,
        /// Why.
        source: std::io::Error,
    },
    /// The record could not be encoded.
    #[error("cannot encode the record: {0}")]
    Encode(String),
}

/// Why a log could not be read (a line that is not a record is skipped with a warning, not an
/// error).
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum ReadLogError {
    /// The file could not be opened.
    #[error("{}: cannot read the log: {why}", .path.display())]
    Open {
        /// The log.
        path: PathBuf,
        /// Why.
        why: std::io::Error,
    },
    /// Reading stopped part way.
    #[error("{}: {why}", .path.display())]
    Read {
        /// The log.
        path: PathBuf,
        /// Why.
        why: std::io::Error,
    },
}

/// An open log for many appends (a batch): one open, a sync every [`SYNC_EVERY`] records and
/// on drop.
pub struct Appender {
    file: File,
    path: PathBuf,
    len: u64,
    unsynced: usize,
}

impl Appender {
    /// Open (create) the log for appending.
    pub fn open(path: &Path) -> Result<Self, LogError> {
        let open = |source| LogError::Open {
            path: path.to_owned(),
            source,
        };
        let mut file = OpenOptions::new()
            .create(true)
            .read(true)
            .append(true)
            .open(path)
            .map_err(open)?;
        let len = file.metadata().map_err(open)?.len();
        let mut me = Self {
            file: {
                if ends_torn(&mut file, len).map_err(open)? {
                    file.write_all(b"\n").map_err(open)?;
                }
                file
            },
            path: path.to_owned(),
            len: 0,
            unsynced: 0,
        };
        me.len = me.file.metadata().map_err(open)?.len();
        Ok(me)
    }

    /// Append one record as one line; on failure nothing of it stays in the file.
    pub fn append<T: Serialize>(&mut self, record: &T) -> Result<(), LogError> {
        let mut line =
            serde_json::to_string(record).map_err(|e| LogError::Encode(e.to_string()))?;
        line.push('\n');
        if let Err(source) = self.file.write_all(line.as_bytes()) {
            // Cut back whatever part of the line reached the file.
            let _ = self.file.set_len(self.len);
            return Err(LogError::Write {
                path: self.path.clone(),
                source,
            });
        }
        self.len += line.len() as u64;
        self.unsynced += 1;
        if self.unsynced >= SYNC_EVERY {
            self.sync()?;
        }
        Ok(())
    }

    /// Flush and sync to the disk.
    pub fn sync(&mut self) -> Result<(), LogError> {
        self.unsynced = 0;
        self.file
            .flush()
            .and_then(|()| self.file.sync_data())
            .map_err(|source| LogError::Write {
                path: self.path.clone(),
                source,
            })
    }
}

impl Drop for Appender {
    fn drop(&mut self) {
        let _ = self.sync();
    }
}

/// Append one record as one line; flushed and synced before returning.
pub fn append<T: Serialize>(path: &Path, record: &T) -> Result<(), LogError> {
    let mut a = Appender::open(path)?;
    a.append(record)?;
    a.sync()
}

/// The file is not empty and its last byte is not a newline (a torn record).
fn ends_torn(file: &mut File, len: u64) -> std::io::Result<bool> {
    if len == 0 {
        return Ok(false);
    }
    file.seek(SeekFrom::Start(len - 1))?;
    let mut last = [0u8; 1];
    file.read_exact(&mut last)?;
    Ok(last[0] != b'\n')
}

/// Visit every complete record of a log in file order, one line in memory at a time: `f` gets
/// the line number and the record; a skipped line gets a warning ("line N: ...") through `warn`.
/// The visit stops at the first error of `f`.
pub fn for_each<E: From<ReadLogError>>(
    path: &Path,
    mut f: impl FnMut(u64, Value) -> Result<(), E>,
    mut warn: impl FnMut(String),
) -> Result<(), E> {
    let file = File::open(path).map_err(|why| ReadLogError::Open {
        path: path.to_path_buf(),
        why,
    })?;
    let read = |why| ReadLogError::Read {
        path: path.to_path_buf(),
        why,
    };
    let mut rd = BufReader::new(file);
    let mut buf = Vec::new();
    let mut line_no = 0u64;
    loop {
        buf.clear();
        let n = (&mut rd)
            .take(MAX_LINE as u64 + 1)
            .read_until(b'\n', &mut buf)
            .map_err(read)?;
        if n == 0 {
            return Ok(());
        }
        line_no += 1;
        let complete = buf.last() == Some(&b'\n');
        if !complete && buf.len() > MAX_LINE {
            warn(format!(
                "line {line_no}: longer than {MAX_LINE} bytes, skipped"
            ));
            // Skip the rest of the long line.
            let mut sink = Vec::new();
            loop {
                sink.clear();
                let m = (&mut rd)
                    .take(MAX_LINE as u64)
                    .read_until(b'\n', &mut sink)
                    .map_err(read)?;
                if m == 0 || sink.last() == Some(&b'\n') {
                    break;
                }
            }
            continue;
        }
        let text = match std::str::from_utf8(&buf) {
            Ok(t) => t.trim(),
            Err(_) => {
                warn(format!("line {line_no}: not UTF-8 text, skipped"));
                continue;
            }
        };
        if text.is_empty() {
            continue;
        }
        match serde_json::from_str::<Value>(text) {
            Ok(v) if v.is_object() => f(line_no, v)?,
            _ if !complete => warn(format!(
                "line {line_no}: torn last record (power cut?) skipped"
            )),
            _ => warn(format!("line {line_no}: not a complete record, skipped")),
        }
    }
}

/// The records of a log and warnings about the lines skipped.
#[cfg(test)]
#[derive(Debug, Default)]
pub struct Contents {
    /// Complete records, in file order.
    pub records: Vec<Value>,
    /// One message per skipped line ("line N: ...").
    pub warnings: Vec<String>,
}

/// Read a whole log into memory (small logs; see [`for_each`] for large ones).
#[cfg(test)]
pub fn read(path: &Path) -> Result<Contents, ReadLogError> {
    let mut out = Contents::default();
    let mut warnings = Vec::new();
    for_each::<ReadLogError>(
        path,
        |_, v| {
            out.records.push(v);
            Ok(())
        },
        |w| warnings.push(w),
    )?;
    out.warnings = warnings;
    Ok(out)
}

/// The record ids already in a log (empty when the log does not exist yet).
pub fn ids(path: &Path) -> Result<HashSet<String>, ReadLogError> {
    let mut ids = HashSet::new();
    if !path.exists() {
        return Ok(ids);
    }
    for_each::<ReadLogError>(
        path,
        |_, v| {
            if let Some(id) = v.get("record_id").and_then(Value::as_str) {
                ids.insert(id.to_owned());
            }
            Ok(())
        },
        |_| {},
    )?;
    Ok(ids)
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn temp(name: &str) -> std::path::PathBuf {
        let dir = std::env::temp_dir().join(format!("biasjig-boardlog-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join(name);
        let _ = std::fs::remove_file(&p);
        p
    }

    #[test]
    fn a_torn_tail_is_skipped_and_never_merged() {
        let p = temp("torn.jsonl");
        append(&p, &json!({"serial": "A1"})).unwrap();
        append(&p, &json!({"serial": "A2"})).unwrap();
        // A power cut in the middle of the third record.
        let mut f = OpenOptions::new().append(true).open(&p).unwrap();
        f.write_all(br#"{"serial": "A3", "verd"#).unwrap();
        drop(f);
        let c = read(&p).unwrap();
        assert_eq!(c.records.len(), 2);
        assert_eq!(c.warnings.len(), 1);
        assert!(
            c.warnings[0].contains("line 3") && c.warnings[0].contains("torn"),
            "{:?}",
            c.warnings
        );
        // The next record starts on a fresh line.
        append(&p, &json!({"serial": "A4"})).unwrap();
        let c = read(&p).unwrap();
        let serials: Vec<_> = c
            .records
            .iter()
            .map(|r| r["serial"].as_str().unwrap().to_string())
            .collect();
        assert_eq!(serials, ["A1", "A2", "A4"]);
        assert_eq!(c.warnings.len(), 1, "{:?}", c.warnings);
        assert!(c.warnings[0].contains("line 3"));
    }

    #[test]
    fn a_full_disk_keeps_nothing_of_the_record() {
        // /dev/full answers every write with "no space left on device".
        let full = Path::new("/dev/full");
        if !full.exists() {
            return;
        }
        let mut a = Appender::open(full).unwrap();
        let e = a.append(&json!({"serial": "A1"})).unwrap_err();
        assert!(e.to_string().contains("nothing of it was kept"), "{e}");
    }
}
