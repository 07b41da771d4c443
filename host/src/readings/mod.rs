//! The readings file of `batch`: CSV with a header naming `serial`, `vcc`, `vb`, `ve`, `vc` (any
//! order, any case, each once; other columns are ignored) and, for the signal test, up to
//! [`MAX_TONES`] columns `gain@F` (F the test frequency in the value grammar: `gain@1k`,
//! `gain@20Hz`; each cell the gain magnitude read at F, empty when not read), read one line at a time (bounded
//! memory whatever its length). A row is one line (no quoted line breaks), LF or CRLF, at most
//! [`MAX_ROW`] bytes; a row that is not UTF-8, too long, or without a number where one is needed is
//! refused alone with its line number.

use std::io::{BufRead, Read};

use biasjig_core::signaltest::{self, ToneReading, MAX_TONES};
use biasjig_core::stage::Readings;
use biasjig_core::units::{self, Unit};

mod error;

pub use error::{HeaderError, RowError};

/// The longest row (and header) accepted, bytes.
pub const MAX_ROW: usize = 4096;

/// The columns a readings file must have, in this order in [`Header::cols`].
const COLUMNS: [&str; 5] = ["serial", "vcc", "vb", "ve", "vc"];

/// One readings row (serial, DC readings, gain readings), or why it is bad.
pub type Row = Result<(String, Readings, Vec<ToneReading>), RowError>;

/// Where the columns are.
#[derive(Debug, Clone, PartialEq)]
pub struct Header {
    /// Field index of serial, vcc, vb, ve, vc.
    pub cols: [usize; 5],
    /// Signal-test columns: field index, column name and test frequency (Hz).
    pub gains: Vec<(usize, String, f64)>,
}

/// A row as read: its line number, its raw bytes (without the line end) and what it says.
#[derive(Debug, Clone, PartialEq)]
pub struct Line {
    /// Line number in the file (1 is the header).
    pub number: u64,
    /// The row's bytes without the line end.
    pub raw: Vec<u8>,
    /// The parsed row.
    pub row: Row,
}

/// Split one line (already without its line end) into trimmed CSV fields.
fn fields(text: &str) -> Result<Vec<String>, String> {
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let mut rec = csv::StringRecord::new();
    match rdr.read_record(&mut rec) {
        Ok(_) => Ok(rec.iter().map(str::to_string).collect()),
        Err(e) => Err(e.to_string()),
    }
}

/// Read the header line: every needed column exactly once.
pub fn header(text: &str) -> Result<Header, HeaderError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let names = fields(text).map_err(|why| HeaderError::NotCsv { why })?;
    let mut cols = [0usize; 5];
    for (k, want) in COLUMNS.iter().enumerate() {
        let at: Vec<usize> = names
            .iter()
            .enumerate()
            .filter(|(_, h)| h.eq_ignore_ascii_case(want))
            .map(|(i, _)| i + 1)
            .collect();
        match at.as_slice() {
            [] => return Err(HeaderError::Missing { column: want }),
            [one] => cols[k] = one - 1,
            many => {
                return Err(HeaderError::Repeated {
                    column: want,
                    at: many.to_vec(),
                })
            }
        }
    }
    let mut gains = Vec::new();
    for (k, h) in names.iter().enumerate() {
        let named = h.get(..5).is_some_and(|p| p.eq_ignore_ascii_case("gain@"));
        if let Some(f) = h.get(5..).filter(|_| named) {
            let f = f
                .strip_suffix("Hz")
                .or_else(|| f.strip_suffix("hz"))
                .unwrap_or(f);
            let f =
                units::parse_value_in(f, Unit::Hertz).map_err(|why| HeaderError::Frequency {
                    column: h.clone(),
                    why,
                })?;
            signaltest::validate_frequency(f).map_err(|why| HeaderError::Tone {
                column: h.clone(),
                why,
            })?;
            gains.push((k, h.clone(), f));
        }
    }
    if gains.len() > MAX_TONES {
        return Err(HeaderError::TooManyTones { count: gains.len() });
    }
    Ok(Header { cols, gains })
}

/// Parse one row's text.
pub fn row(h: &Header, text: &str) -> Row {
    let f = fields(text).map_err(|why| RowError::NotCsv { why })?;
    let field = |k: usize| f.get(h.cols[k]).map_or("", String::as_str);
    let value = |k: usize| -> Result<f64, RowError> {
        let t = field(k);
        units::parse_signed_in(t, Unit::Volt).map_err(|why| RowError::Voltage {
            column: COLUMNS[k],
            text: t.to_string(),
            why,
        })
    };
    let serial = field(0).to_string();
    if serial.is_empty() {
        return Err(RowError::NoSerial);
    }
    let readings = Readings {
        vcc: value(1)?,
        vb: value(2)?,
        ve: value(3)?,
        vc: value(4)?,
    };
    let mut tones = Vec::new();
    for (k, name, freq) in &h.gains {
        let t = f.get(*k).map_or("", String::as_str);
        if t.is_empty() {
            continue;
        }
        let g: f64 = t.parse().map_err(|_| RowError::Gain {
            column: name.clone(),
            text: t.to_string(),
        })?;
        let reading = ToneReading { f: *freq, gain: g };
        signaltest::validate_reading(&reading).map_err(|why| RowError::Tone {
            column: name.clone(),
            text: t.to_string(),
            why,
        })?;
        tones.push(reading);
    }
    Ok((serial, readings, tones))
}

/// The rows of a readings file, one line at a time.
pub struct Rows<R: BufRead> {
    rd: R,
    header: Header,
    number: u64,
}

/// Read one line of at most `MAX_ROW` bytes; `Ok(None)` at the end. A longer line is consumed
/// whole and returned as `Err(len)`.
fn next_line(
    rd: &mut impl BufRead,
    buf: &mut Vec<u8>,
) -> std::io::Result<Option<Result<(), usize>>> {
    buf.clear();
    let n = rd.take(MAX_ROW as u64 + 2).read_until(b'\n', buf)?;
    if n == 0 {
        return Ok(None);
    }
    if buf.last() != Some(&b'\n') && buf.len() > MAX_ROW + 1 {
        let mut total = buf.len();
        let mut rest = Vec::new();
        loop {
            rest.clear();
            let m = rd.take(1 << 16).read_until(b'\n', &mut rest)?;
            total += m;
            if m == 0 || rest.last() == Some(&b'\n') {
                break;
            }
        }
        return Ok(Some(Err(total)));
    }
    if buf.last() == Some(&b'\n') {
        buf.pop();
    }
    if buf.last() == Some(&b'\r') {
        buf.pop();
    }
    if buf.len() > MAX_ROW {
        return Ok(Some(Err(buf.len())));
    }
    Ok(Some(Ok(())))
}

impl<R: BufRead> Rows<R> {
    /// Read the header; the rows follow through the iterator.
    pub fn new(mut rd: R) -> Result<Self, HeaderError> {
        let mut buf = Vec::new();
        let h = match next_line(&mut rd, &mut buf)? {
            None => return Err(HeaderError::Empty),
            Some(Err(len)) => return Err(HeaderError::TooLong { len }),
            Some(Ok(())) => {
                let text = std::str::from_utf8(&buf).map_err(|why| HeaderError::NotText { why })?;
                header(text)?
            }
        };
        Ok(Self {
            rd,
            header: h,
            number: 1,
        })
    }
}

impl<R: BufRead> Iterator for Rows<R> {
    type Item = Result<Line, std::io::Error>;

    fn next(&mut self) -> Option<Self::Item> {
        let mut buf = Vec::new();
        loop {
            let got = match next_line(&mut self.rd, &mut buf) {
                Ok(None) => return None,
                Ok(Some(g)) => g,
                Err(e) => return Some(Err(e)),
            };
            self.number += 1;
            let row = match got {
                Err(len) => Err(RowError::TooLong { len }),
                Ok(()) => match std::str::from_utf8(&buf) {
                    Err(e) => Err(RowError::NotText {
                        at: e.valid_up_to() + 1,
                    }),
                    Ok(t) if t.trim().trim_matches(',').trim().is_empty() => continue,
                    Ok(t) => row(&self.header, t),
                },
            };
            return Some(Ok(Line {
                number: self.number,
                raw: std::mem::take(&mut buf),
                row,
            }));
        }
    }
}

/// Parse a whole CSV text into rows with their line numbers (for tests).
#[cfg(test)]
pub fn parse(text: &str) -> Result<Vec<(u64, Row)>, String> {
    let rows = Rows::new(text.as_bytes()).map_err(|e| e.to_string())?;
    rows.map(|l| l.map(|l| (l.number, l.row)).map_err(|e| e.to_string()))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Row `k` is refused with a message that contains `part`.
    fn assert_refused(rows: &[(u64, Row)], k: usize, part: &str) {
        let m = rows[k].1.as_ref().unwrap_err().to_string();
        assert!(m.contains(part), "row {k}: {m}");
    }

    #[test]
    fn columns_in_any_order_and_bad_rows_by_line() {
        let text = "note,VC,vb,serial,ve,vcc\n\
                    x,8.0,2.55,A1,1.9,15\n\
                    y,8.1,abc,A2,1.9,15\n\
                    z,8.2,2.56,A3,-0.0012,15\n\
                    w,8.2,2.56,,1.9,15\n";
        let rows = parse(text).unwrap();
        assert_eq!(rows.len(), 4);
        let (line, ok) = &rows[0];
        assert_eq!(*line, 2);
        let (serial, r, tones) = ok.as_ref().unwrap();
        assert_eq!(serial, "A1");
        assert!(tones.is_empty());
        assert_eq!((r.vcc, r.vb, r.ve, r.vc), (15.0, 2.55, 1.9, 8.0));
        assert_eq!(rows[1].0, 3);
        assert_refused(&rows, 1, "column vb: 'abc'");
        assert_eq!(rows[2].1.as_ref().unwrap().1.ve, -0.0012);
        assert_refused(&rows, 3, "serial");
        assert!(parse("serial,vb,ve,vc\n")
            .unwrap_err()
            .to_string()
            .contains("'vcc'"));
    }

    #[test]
    fn crlf_lines_keep_their_numbers_and_blank_lines_count() {
        let text = "serial,vcc,vb,ve,vc\r\nA1,15,2.5,1.9,8\r\n\r\nA2,15,x,1.9,8\r\nA3,15,2.5,1.9,8";
        let rows = parse(text).unwrap();
        let lines: Vec<u64> = rows.iter().map(|r| r.0).collect();
        assert_eq!(lines, [2, 4, 5]);
        assert_refused(&rows, 1, "column vb: 'x'");
        assert_eq!(rows[2].1.as_ref().unwrap().1.vc, 8.0);
    }

    #[test]
    fn a_row_that_is_not_utf8_is_refused_alone_with_its_line() {
        let mut bytes = b"serial,vcc,vb,ve,vc\nA1,15,2.5,1.9,8\nA\xff2,15,2.5,1.9,8\n".to_vec();
        bytes.extend_from_slice(b"A3,15,2.5,1.9,8\n");
        let rows: Vec<Line> = Rows::new(&bytes[..]).unwrap().map(Result::unwrap).collect();
        assert_eq!(rows.len(), 3);
        assert!(rows[0].row.is_ok() && rows[2].row.is_ok());
        assert_eq!(rows[1].number, 3);
        assert!(rows[1]
            .row
            .as_ref()
            .unwrap_err()
            .to_string()
            .contains("not UTF-8"));
    }

    #[test]
    fn duplicate_columns_are_said_and_long_rows_refused() {
        let e = parse("serial,vcc,vb,ve,vc,VB\n").unwrap_err();
        assert!(e.contains("'vb' appears 2 times (columns 3, 6)"), "{e}");
        let long = format!(
            "serial,vcc,vb,ve,vc\nA1,15,2.5,1.9,8,{}\nA2,15,2.5,1.9,8\n",
            "x".repeat(MAX_ROW)
        );
        let rows = parse(&long).unwrap();
        assert_eq!(rows.len(), 2);
        assert_refused(&rows, 0, "allowed: at most");
        assert_eq!(rows[1].0, 3);
        assert!(rows[1].1.is_ok());
    }

    #[test]
    fn gain_columns_by_frequency() {
        let text = "serial,vcc,vb,ve,vc,gain@1k,Gain@20Hz\n\
                    A1,12,2.05,1.39,5.74,13.7,13.5\n\
                    A2,12,2.05,1.39,5.74,,3.2\n\
                    A3,12,2.05,1.39,5.74,x,1\n";
        let rows = parse(text).unwrap();
        let (_, _, t) = rows[0].1.as_ref().unwrap();
        assert_eq!(t.len(), 2);
        assert_eq!(
            (t[0].f, t[0].gain, t[1].f, t[1].gain),
            (1000.0, 13.7, 20.0, 13.5)
        );
        let (_, _, t) = rows[1].1.as_ref().unwrap();
        assert_eq!((t.len(), t[0].f), (1, 20.0));
        assert_refused(&rows, 2, "column gain@1k: 'x'");
        assert!(parse("serial,vcc,vb,ve,vc,gain@9M\n")
            .unwrap_err()
            .contains("gain@9M"));
    }

    #[test]
    fn a_reading_with_another_unit_is_refused() {
        let rows = parse("serial,vcc,vb,ve,vc\nA1,12,2.05,1.39mA,5.74\n").unwrap();
        assert_refused(&rows, 0, "column ve");
    }
}
