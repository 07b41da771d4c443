//! The board log: append-only JSON Lines, one complete record per board.
//!
//! Each record is serialised to one line and written with a single `write_all` of the whole
//! line (newline included), then flushed and synced to the disk, so a power cut leaves at most
//! one torn last line. When appending after a torn tail, the new record starts on a fresh line,
//! so it is never merged with the torn one. On reading, a line that is not a complete JSON
//! object is skipped with a warning naming its line number.

use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::Path;
use std::time::{SystemTime, UNIX_EPOCH};

use serde_json::Value;

use crate::error::CliError;

/// Append one record as one line; flushed and synced before returning.
pub fn append(path: &Path, record: &Value) -> Result<(), CliError> {
    let io = |e: std::io::Error| CliError::usage(format!("--log: {}: {e}", path.display()));
    let mut line = serde_json::to_string(record)
        .map_err(|e| CliError::usage(format!("--log: could not encode the record: {e}")))?;
    line.push('\n');
    let mut file = OpenOptions::new()
        .create(true)
        .append(true)
        .read(true)
        .open(path)
        .map_err(io)?;
    if ends_torn(&mut file).map_err(io)? {
        line.insert(0, '\n');
    }
    file.write_all(line.as_bytes()).map_err(io)?;
    file.flush().map_err(io)?;
    file.sync_data().map_err(io)?;
    Ok(())
}

/// The file is not empty and its last byte is not a newline (a torn record).
fn ends_torn(file: &mut File) -> std::io::Result<bool> {
    let len = file.metadata()?.len();
    if len == 0 {
        return Ok(false);
    }
    file.seek(SeekFrom::Start(len - 1))?;
    let mut last = [0u8; 1];
    file.read_exact(&mut last)?;
    Ok(last[0] != b'\n')
}

/// The records of a log and warnings about the lines skipped.
#[derive(Debug, Default)]
pub struct Contents {
    /// Complete records, in file order.
    pub records: Vec<Value>,
    /// One message per skipped line ("line N: ...").
    pub warnings: Vec<String>,
}

/// Read a log; torn or damaged lines are skipped with a warning, never merged.
pub fn read(path: &Path) -> Result<Contents, CliError> {
    let bytes = std::fs::read(path)
        .map_err(|e| CliError::usage(format!("{}: cannot read the log: {e}", path.display())))?;
    let text = String::from_utf8_lossy(&bytes);
    let complete_tail = text.ends_with('\n');
    let lines: Vec<&str> = text.split('\n').collect();
    let last = lines.len().saturating_sub(1);
    let mut out = Contents::default();
    for (k, line) in lines.iter().enumerate() {
        if line.trim().is_empty() {
            continue;
        }
        match serde_json::from_str::<Value>(line) {
            Ok(v) if v.is_object() => out.records.push(v),
            _ if k == last && !complete_tail => out.warnings.push(format!(
                "line {}: torn last record (power cut?) skipped",
                k + 1
            )),
            _ => out
                .warnings
                .push(format!("line {}: not a complete record, skipped", k + 1)),
        }
    }
    Ok(out)
}

/// The time now as ISO 8601 UTC, to the second ("2025-03-04T05:06:07Z").
pub fn now_utc() -> String {
    let secs = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    iso_utc(secs)
}

/// Seconds since 1970-01-01 UTC as ISO 8601.
pub fn iso_utc(secs: u64) -> String {
    let days = i64::try_from(secs / 86_400).unwrap_or(0);
    let rem = secs % 86_400;
    // Civil date from days since the epoch (proleptic Gregorian calendar).
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
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
    fn dates_are_iso_utc() {
        // 2000-03-01 is day 11017 after the epoch (leap-year rule of the Gregorian calendar).
        assert_eq!(iso_utc(0), "1970-01-01T00:00:00Z");
        assert_eq!(iso_utc(11_017 * 86_400 + 3_723), "2000-03-01T01:02:03Z");
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
}
