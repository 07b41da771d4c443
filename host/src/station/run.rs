//! The technician's loop: serial numbers (and, manual, typed readings) in, one record per
//! board out; and the in-process console engine that serves the manual mode.

use std::collections::HashMap;
use std::io::{BufRead, Write};
use std::path::Path;
use std::time::Duration;

use super::records::{record, refused_record};
use super::screen::{banner, big};
use super::session::{BoardError, Station};
use thiserror::Error;

use crate::board::{RecordError, StationSink};
use crate::boardlog;
use crate::link::{LinkError, MemoryPort, Port};
use crate::local::local_console;

/// Why the station's loop stopped.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum StationError {
    /// The typed input could not be read (exit 2).
    #[error("stdin: {0}")]
    Input(std::io::Error),
    /// The instrument failed or refused what no retry mends (exit 3).
    #[error(transparent)]
    Board(#[from] BoardError),
    /// A record could not be written (nothing of it was kept).
    #[error(transparent)]
    Record(#[from] RecordError),
}

/// Status codes that say the typed line was not readings (typing errors: ask again, log nothing).
const NOT_READINGS: [&str; 6] = [
    "USAGE", "VALUE", "UNKNOWN", "TOO_LONG", "CONTROL", "ENCODING",
];

/// The code word of an `err CODE text` status.
pub(crate) fn code_of(status: &str) -> &str {
    status
        .strip_prefix("err ")
        .and_then(|r| r.split(' ').next())
        .unwrap_or("")
}

/// A typed readings line the station sends: four words, no control characters (a CR inside
/// would make a second command).
fn readings_line(typed: &str) -> Result<String, String> {
    if typed.chars().any(char::is_control) {
        return Err("control characters in the line".into());
    }
    let words: Vec<&str> = typed.split_whitespace().collect();
    if words.len() != 4 {
        return Err(format!(
            "{} word{}; four readings are needed: VCC VB VE VC",
            words.len(),
            if words.len() == 1 { "" } else { "s" }
        ));
    }
    Ok(format!("check {}", words.join(" ")))
}

/// Serial numbers already in the log, with how many records each has (none without a log).
fn serials_in(log: Option<&Path>) -> HashMap<String, usize> {
    let Some(log) = log else {
        return HashMap::new();
    };
    let mut seen = HashMap::new();
    if log.exists() {
        // Tests only: a repair record in the log names the serial too.
        let _ = boardlog::for_each::<boardlog::ReadLogError>(
            log,
            |_, r| {
                if let (Some(s), None) = (r["serial"].as_str(), r.get("kind")) {
                    *seen.entry(s.to_owned()).or_insert(0) += 1;
                }
                Ok(())
            },
            |_| {},
        );
    }
    seen
}

/// Run the loop: serial numbers (and, manual, readings) from `input`; every record (judged or
/// refused) goes through `sink` to the log and the store, with station, operator and lot. A
/// serial number already in the log, in the store with this design, or done in this run is said
/// so and its record marked `retest`. Manual: a line
/// that is not readings (a typing error) asks for the readings again; readings the instrument
/// refuses (`IMPLAUSIBLE`) are logged as refused with the reason, and the readings are asked
/// again (an empty line goes on to the next board). Instrument: a refused board (`IMPLAUSIBLE`,
/// `JIG`) is logged as refused and the loop goes on. Returns the boards judged.
pub fn run_loop<P: Port, F: FnMut() -> Result<P, LinkError>>(
    st: &mut Station<P, F>,
    mut input: impl BufRead,
    out: &mut impl Write,
    sink: &mut StationSink,
    manual: bool,
) -> Result<usize, StationError> {
    let mut boards = 0;
    let mut seen = serials_in(sink.log.as_deref());
    let mut ask = |out: &mut dyn Write, prompt: &str| -> Result<Option<String>, StationError> {
        write!(out, "{prompt}").ok();
        out.flush().ok();
        let mut l = Vec::new();
        let n = input
            .read_until(b'\n', &mut l)
            .map_err(StationError::Input)?;
        Ok((n > 0).then(|| String::from_utf8_lossy(&l).trim().to_owned()))
    };
    'boards: while let Some(serial) = ask(out, "serial number (empty to stop): ")? {
        if serial.is_empty() {
            break;
        }
        if serial.chars().any(char::is_control) {
            writeln!(out, "not a serial number: control characters in {serial:?}").ok();
            continue;
        }
        if serial.split_whitespace().nth(1).is_some() {
            // Readings typed at the serial prompt would otherwise become a board's name.
            writeln!(
                out,
                "not a serial number: {serial:?} has spaces (readings are asked for after the \
                 serial number); type the serial number"
            )
            .ok();
            continue;
        }
        let in_log = seen.get(&serial).copied().unwrap_or(0);
        let in_store = sink.earlier_tests(&serial, &format!("{:016x}", st.hash()))?;
        let (earlier, place) = if in_store > in_log {
            (in_store, "store")
        } else {
            (in_log, "log")
        };
        let retest = earlier > 0;
        if retest {
            writeln!(
                out,
                "board {serial} was tested before ({earlier} record{} in the {place}): this test \
                 is recorded as a retest",
                if earlier == 1 { "" } else { "s" }
            )
            .ok();
        }
        // A refusal of this board is already on record (the empty line then only moves on).
        let mut refusal_logged = false;
        let reply = loop {
            let (action, typed) = if manual {
                let Some(r) = ask(out, "readings VCC VB VE VC (empty: next board): ")? else {
                    break 'boards;
                };
                if r.is_empty() {
                    if refusal_logged {
                        writeln!(out, "board {serial}: logged as refused; next board").ok();
                    } else {
                        writeln!(out, "board {serial}: no readings, not logged").ok();
                    }
                    continue 'boards;
                }
                match readings_line(&r) {
                    Ok(a) => (a, Some(r)),
                    Err(why) => {
                        writeln!(out, "not readings: {why}; type them again").ok();
                        continue;
                    }
                }
            } else {
                ("test".to_owned(), None)
            };
            match st.board(&action) {
                Ok(r) => break r,
                Err(BoardError::Refused(status)) if NOT_READINGS.contains(&code_of(&status)) => {
                    if !manual {
                        return Err(BoardError::Refused(status).into());
                    }
                    writeln!(out, "not readings: {status}; type them again").ok();
                }
                Err(BoardError::Refused(status))
                    if manual || ["IMPLAUSIBLE", "JIG"].contains(&code_of(&status)) =>
                {
                    let reason = status.strip_prefix("err ").unwrap_or(&status).to_owned();
                    sink.write_value(st.stamp(refused_record(
                        &serial,
                        st.design_id(),
                        st.hash(),
                        &reason,
                        typed.as_deref(),
                        &boardlog::now_utc(),
                        retest,
                    )))?;
                    *seen.entry(serial.clone()).or_insert(0) += 1;
                    refusal_logged = true;
                    writeln!(
                        out,
                        "{}not checked, logged as refused: {reason}",
                        big("REFUSED")
                    )
                    .ok();
                    if !manual {
                        continue 'boards;
                    }
                    writeln!(out, "type the readings again (empty: next board)").ok();
                }
                Err(e) => return Err(e.into()),
            }
        };
        let time = boardlog::now_utc();
        sink.write_value(st.stamp(record(
            &serial,
            st.design_id(),
            st.hash(),
            &reply,
            &time,
            retest,
        )))?;
        *seen.entry(serial.clone()).or_insert(0) += 1;
        write!(out, "{}", banner(st.stage(), &reply)).ok();
        boards += 1;
    }
    Ok(boards)
}

/// Serve the in-process console engine on one end of a memory pair (manual mode).
pub fn serve(mut port: MemoryPort) {
    let mut c = local_console();
    let mut buf = [0u8; 256];
    let mut out = Vec::new();
    loop {
        match port.recv(&mut buf, Duration::from_secs(3600)) {
            Ok(0) => continue,
            Ok(n) => {
                out.clear();
                let _ = c.feed(
                    &buf[..n],
                    &mut embedded_io_adapters::std::FromStd::new(&mut out),
                );
                if port.send(&out).is_err() {
                    return;
                }
            }
            Err(_) => return,
        }
    }
}
