//! Golden files: a whole serial session with the emulated jig and the screen pictures
//! (`fw:screen?`), compared byte for byte with the files under `tests/golden/`.
//!
//! The golden files are regression pins: copied from our own output (`BIASJIG_BLESS=1` writes
//! them again) after a person read them; they catch any unintended change of a reply or of a
//! screen. A change that is meant shows as a change of those files, reviewed as files.
use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// `tests/golden/`.
pub fn golden_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("golden")
}

/// Compares `got` with the golden file `name` (under `tests/golden/`), or writes it when
/// `BIASJIG_BLESS` is set.
pub fn assert_golden(name: &str, got: &str) {
    let path = golden_dir().join(name);
    if std::env::var_os("BIASJIG_BLESS").is_some() {
        if let Some(dir) = path.parent() {
            std::fs::create_dir_all(dir).expect("golden folder");
        }
        std::fs::write(&path, got).expect("write golden file");
    }
    let want = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("{}: {e} (BIASJIG_BLESS=1 writes it)", path.display()));
    if got != want {
        let line = got
            .lines()
            .zip(want.lines())
            .position(|(g, w)| g != w)
            .map_or(got.lines().count().min(want.lines().count()), |i| i);
        panic!(
            "{} differs from this run, first at line {}:\n  this run: {:?}\n  golden:   {:?}\n(BIASJIG_BLESS=1 writes it again once the change is meant)",
            path.display(),
            line + 1,
            got.lines().nth(line),
            want.lines().nth(line)
        );
    }
}

/// The serial line itself (no host program in between): bytes out, bytes back.
pub struct Raw {
    port: Box<dyn serialport::SerialPort>,
    /// The session so far: each line sent as `> LINE`, then the reply as received.
    pub transcript: String,
}

/// The reply ends with its status line.
fn ends_with_status(reply: &[u8]) -> bool {
    let Some(body) = reply.strip_suffix(b"\r\n") else {
        return false;
    };
    let last = body.rsplit(|&b| b == b'\n').next().unwrap_or(body);
    last == b"ok" || last.starts_with(b"ok ") || last.starts_with(b"err ")
}

impl Raw {
    /// Opens the emulated jig's pseudo-terminal.
    pub fn open(pts: &str) -> Raw {
        let port = serialport::new(pts, 115_200)
            .timeout(Duration::from_millis(100))
            .open()
            .unwrap_or_else(|e| panic!("open {pts}: {e}"));
        let mut raw = Raw {
            port,
            transcript: String::new(),
        };
        raw.sync();
        raw
    }

    /// Waits until the unit answers: bytes sent while it still starts up (before its USART is
    /// on) are lost, so empty lines are sent until one is answered `ok`; then any late answers
    /// are read and dropped, and the session starts clean.
    fn sync(&mut self) {
        let deadline = Instant::now() + Duration::from_secs(30);
        let mut seen = Vec::new();
        let mut buf = [0u8; 64];
        'outer: while Instant::now() < deadline {
            self.port
                .write_all(b"\n")
                .expect("write to the emulated jig");
            let wait = Instant::now() + Duration::from_millis(500);
            while Instant::now() < wait {
                match self.port.read(&mut buf) {
                    Ok(n) => seen.extend_from_slice(&buf[..n]),
                    Err(e) if e.kind() == std::io::ErrorKind::TimedOut => {}
                    Err(e) => panic!("read from the emulated jig: {e}"),
                }
                if seen.ends_with(b"ok\r\n") {
                    break 'outer;
                }
            }
        }
        assert!(
            seen.ends_with(b"ok\r\n"),
            "the emulated jig did not answer an empty line: {:?}",
            String::from_utf8_lossy(&seen)
        );
        // Late answers to the other empty lines, if any.
        let quiet = Instant::now() + Duration::from_millis(300);
        while Instant::now() < quiet {
            match self.port.read(&mut buf) {
                Ok(_) => {}
                Err(e) if e.kind() == std::io::ErrorKind::TimedOut => {}
                Err(e) => panic!("read from the emulated jig: {e}"),
            }
        }
    }

    /// Sends one line (LF-terminated) and gives the whole reply, bytes as received, up to and
    /// with its status line.
    pub fn send(&mut self, line: &str) -> Vec<u8> {
        self.port
            .write_all(format!("{line}\n").as_bytes())
            .expect("write to the emulated jig");
        self.port.flush().expect("flush to the emulated jig");
        let mut reply = Vec::new();
        let mut buf = [0u8; 512];
        let deadline = Instant::now() + Duration::from_secs(60);
        while !ends_with_status(&reply) {
            assert!(
                Instant::now() < deadline,
                "no status line for {line:?}; so far {:?}",
                String::from_utf8_lossy(&reply)
            );
            match self.port.read(&mut buf) {
                Ok(n) => reply.extend_from_slice(&buf[..n]),
                Err(e) if e.kind() == std::io::ErrorKind::TimedOut => {}
                Err(e) => panic!("read from the emulated jig: {e}"),
            }
        }
        reply
    }

    /// Sends one line and writes it and its reply into the transcript. Every reply line must end
    /// in CR LF (the protocol's line end): the transcript keeps them as LF, and a lone CR would
    /// fail here, so the comparison of the transcript is byte for byte.
    pub fn say(&mut self, line: &str) -> String {
        let reply = self.send(line);
        let text = String::from_utf8(reply)
            .unwrap_or_else(|e| panic!("{line:?}: the reply is not UTF-8: {e}"));
        let lf = text.replace("\r\n", "\n");
        assert!(
            !lf.contains('\r'),
            "{line:?}: a line not ended by CR LF: {text:?}"
        );
        self.transcript.push_str(&format!("> {line}\n{lf}"));
        lf
    }

    /// `fw:screen?`: compares the picture with `tests/golden/screens/NAME.txt`; the transcript
    /// names the picture in place of its 32 lines.
    pub fn screen(&mut self, name: &str) {
        let reply = self.send("fw:screen?");
        let text = String::from_utf8(reply).expect("screen art is ASCII");
        let art = text
            .strip_suffix("ok\r\n")
            .unwrap_or_else(|| panic!("fw:screen? answered {text:?}"));
        let lf = art.replace("\r\n", "\n");
        assert!(!lf.contains('\r') && lf.lines().count() == 32, "{text:?}");
        assert_golden(&format!("screens/{name}.txt"), &lf);
        self.transcript.push_str(&format!(
            "> fw:screen?\n[tests/golden/screens/{name}.txt]\nok\n"
        ));
    }
}
