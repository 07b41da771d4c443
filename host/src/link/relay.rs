//! A typed session carried to the instrument: each line the console engine would answer is sent
//! alone and gets its one reply.

use std::io::{Read, Write};

use biasjig_core::console::line::{Feed, LineBuf, LineError};
use biasjig_core::console::{Code, LINE_MAX};

use thiserror::Error;

use super::{Link, LinkError, Port};

/// Why a relayed session stopped.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum RelayError {
    /// The typed input could not be read (exit 2).
    #[error("stdin: {0}")]
    Input(std::io::Error),
    /// A reply could not be shown (exit 3).
    #[error("stdout: {0}")]
    Output(std::io::Error),
    /// The link failed (exit 3).
    #[error(transparent)]
    Link(#[from] LinkError),
}

/// Carry lines from `input` to the instrument and its replies to `out`, until the end of input.
///
/// The input is cut into lines exactly as the console engine cuts them (CR, LF or CR LF end a
/// line; [`LineBuf`]), so every line the instrument would answer is sent alone and gets its one
/// reply: a CR inside a typed line makes two commands with two replies, never one command whose
/// second reply lands on the next. A line the engine would refuse before reading it (a control
/// byte, bytes that are not UTF-8, longer than [`LINE_MAX`]) is answered here with the engine's
/// own status line and not sent, so the session goes on.
pub fn relay<P: Port>(
    link: &mut Link<P>,
    mut input: impl Read,
    out: &mut impl Write,
) -> Result<(), RelayError> {
    let mut lines: LineBuf<LINE_MAX> = LineBuf::new();
    let mut buf = [0u8; 256];
    loop {
        let n = match input.read(&mut buf) {
            Ok(n) => n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(RelayError::Input(e)),
        };
        let Some(chunk) = buf.get(..n).filter(|c| !c.is_empty()) else {
            if let Some(line) = lines.finish().map(|l| l.map(str::to_owned)) {
                relay_line(link, line, out)?;
            }
            return Ok(());
        };
        let mut rest = chunk;
        loop {
            let (event, r) = match lines.feed(rest) {
                Feed::Pending => break,
                Feed::Overfull { rest: r } => (None, r),
                Feed::Line { line, rest: r } => (Some(line.map(str::to_owned)), r),
            };
            match event {
                None => answer(
                    out,
                    &[],
                    &format!(
                        "err {} line longer than {LINE_MAX} bytes; discarded up to its end",
                        Code::TooLong.name()
                    ),
                )?,
                Some(line) => relay_line(link, line, out)?,
            }
            rest = r;
        }
    }
}

/// One framed input line: sent and its reply shown, or refused here as the engine would.
fn relay_line<P: Port>(
    link: &mut Link<P>,
    line: Result<String, LineError>,
    out: &mut impl Write,
) -> Result<(), RelayError> {
    match line {
        Ok(text) => {
            let reply = link.command(&text)?;
            answer(out, &reply.data, &reply.status)
        }
        Err(e) => {
            let code = match e {
                LineError::Encoding => Code::Encoding,
                _ => Code::Control,
            };
            answer(out, &[], &format!("err {} {e}", code.name()))
        }
    }
}

/// Data lines, then the status line.
fn answer(out: &mut impl Write, data: &[String], status: &str) -> Result<(), RelayError> {
    for l in data.iter().map(String::as_str).chain([status]) {
        writeln!(out, "{l}").map_err(RelayError::Output)?;
    }
    out.flush().map_err(RelayError::Output)
}
