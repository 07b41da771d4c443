//! The host program against the emulated jig: `biasjig console --port`, `biasjig station`, and
//! plain runs of `biasjig`.
use crate::judged::pairs;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::{mpsc, Mutex, OnceLock};
use std::time::{Duration, Instant};

/// The host program, built once (`cargo build -p biasjig`, same target directory and profile as
/// this test).
pub fn biasjig() -> PathBuf {
    static BUILT: OnceLock<PathBuf> = OnceLock::new();
    static LOCK: Mutex<()> = Mutex::new(());
    let _g = LOCK.lock().unwrap_or_else(|e| e.into_inner());
    BUILT
        .get_or_init(|| {
            let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
            // The same profile as this test's own build (its executable sits in
            // target/<profile>/deps).
            let release = std::env::current_exe()
                .ok()
                .and_then(|e| e.parent()?.parent()?.file_name().map(|n| n == "release"))
                .unwrap_or(false);
            let mut args = vec!["build", "-p", "biasjig"];
            if release {
                args.push("--release");
            }
            let st = Command::new(cargo)
                .args(&args)
                .current_dir(Path::new(env!("CARGO_MANIFEST_DIR")).join(".."))
                .status()
                .expect("run cargo build -p biasjig");
            assert!(st.success(), "cargo build -p biasjig failed");
            // target/<profile>/deps/this-test -> target/<profile>/biasjig
            let exe = std::env::current_exe().expect("test executable path");
            let bin = exe
                .parent()
                .and_then(Path::parent)
                .map(|d| d.join("biasjig"))
                .expect("target directory of the test executable");
            assert!(bin.exists(), "no host program at {}", bin.display());
            bin
        })
        .clone()
}

/// Sends each line of `stream` to `tx`, from a thread of its own, until either ends.
pub fn forward_lines<R: Read + Send + 'static>(stream: R, tx: mpsc::Sender<String>) {
    std::thread::spawn(move || {
        for line in BufReader::new(stream).lines().map_while(Result::ok) {
            if tx.send(line).is_err() {
                break;
            }
        }
    });
}

/// A child process killed when dropped.
pub struct Guard(Child);

impl Drop for Guard {
    fn drop(&mut self) {
        let _ = self.0.kill();
        let _ = self.0.wait();
    }
}

/// `biasjig console --port PTS`: lines in on stdin, reply lines out on stdout.
pub struct Session {
    pub child: Guard,
    pub stdin: Option<std::process::ChildStdin>,
    pub lines: mpsc::Receiver<String>,
    pub stderr: mpsc::Receiver<String>,
}

pub fn is_status(l: &str) -> bool {
    l == "ok" || l.starts_with("ok ") || l.starts_with("err ")
}

impl Session {
    pub fn open(pts: &str) -> Session {
        let mut child = Command::new(biasjig())
            .args(["console", "--port", pts])
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("start biasjig console --port");
        let stdin = child.stdin.take();
        let (tx, lines) = mpsc::channel();
        forward_lines(child.stdout.take().expect("piped stdout"), tx);
        let (etx, stderr) = mpsc::channel();
        forward_lines(child.stderr.take().expect("piped stderr"), etx);
        Session {
            child: Guard(child),
            stdin,
            lines,
            stderr,
        }
    }

    pub fn stderr_text(&self) -> String {
        self.stderr.try_iter().collect::<Vec<_>>().join("\n")
    }

    /// Sends one line; gives its data lines and its status line.
    pub fn ask(&mut self, line: &str) -> (Vec<String>, String) {
        let stdin = self.stdin.as_mut().expect("session open");
        writeln!(stdin, "{line}").expect("write to biasjig console");
        stdin.flush().expect("flush to biasjig console");
        let mut data = Vec::new();
        let deadline = Instant::now() + Duration::from_secs(40);
        loop {
            let left = deadline.saturating_duration_since(Instant::now());
            match self.lines.recv_timeout(left) {
                Ok(l) if is_status(&l) => return (data, l),
                Ok(l) => data.push(l),
                Err(_) => {
                    let status = self.child.0.try_wait().ok().flatten();
                    panic!(
                        "no status line for {line:?} (data so far {data:?}; biasjig console exit {status:?}; stderr: {})",
                        self.stderr_text()
                    );
                }
            }
        }
    }

    /// Sends one line that must succeed; gives its data lines.
    pub fn ok(&mut self, line: &str) -> Vec<String> {
        let (data, status) = self.ask(line);
        assert!(
            status == "ok" || status.starts_with("ok "),
            "{line:?} answered {status:?} (data {data:?})"
        );
        data
    }

    /// End of input: the console exits.
    pub fn close(mut self) {
        drop(self.stdin.take());
        let deadline = Instant::now() + Duration::from_secs(10);
        while Instant::now() < deadline {
            if let Ok(Some(st)) = self.child.0.try_wait() {
                assert!(
                    st.success(),
                    "biasjig console exit {st}: {}",
                    self.stderr_text()
                );
                return;
            }
            std::thread::sleep(Duration::from_millis(50));
        }
        panic!("biasjig console did not exit at the end of its input");
    }
}

pub fn run_host(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(biasjig())
        .args(args)
        .output()
        .expect("run biasjig");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

pub fn temp_dir() -> PathBuf {
    let d = std::env::temp_dir().join(format!("biasjig-fw-{}", std::process::id()));
    std::fs::create_dir_all(&d).expect("temp dir");
    d
}

/// The demo scenario's requirement (BRIEF.md, invented): 12 V, gain 15, RL 15 kΩ, RS 600 Ω,
/// low corner 5 Hz, 2 mA.
pub fn write_design(dir: &Path) -> PathBuf {
    let file = dir.join("preamp.toml");
    let f = file.to_str().expect("utf-8 path");
    let (code, _, err) = run_host(&[
        "design", "--vcc", "12", "--gain", "15", "--rl", "15k", "--rs", "600", "--f-low", "5",
        "--ic-max", "2m", "-o", f,
    ]);
    assert_eq!(code, 0, "biasjig design: {err}");
    file
}

/// `biasjig station`: one board per serial number on stdin; gives the log records.
pub fn station(pts: &str, design: &Path, log: &Path, serials: &[&str]) -> Vec<serde_json::Value> {
    station_with(pts, design, log, serials, &[])
}

/// As [`station`], with more options.
pub fn station_with(
    pts: &str,
    design: &Path,
    log: &Path,
    serials: &[&str],
    extra: &[&str],
) -> Vec<serde_json::Value> {
    let before = std::fs::read_to_string(log)
        .unwrap_or_default()
        .lines()
        .count();
    let mut child = Guard(
        Command::new(biasjig())
            .args(["station", "--port", pts])
            .arg("--design")
            .arg(design)
            .arg("--log")
            .arg(log)
            .args(extra)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("start biasjig station"),
    );
    {
        let mut stdin = child.0.stdin.take().expect("piped stdin");
        for s in serials {
            writeln!(stdin, "{s}").expect("serial to station");
        }
        writeln!(stdin).expect("end of serials");
    }
    let deadline = Instant::now() + Duration::from_secs(90);
    let status = loop {
        if let Ok(Some(st)) = child.0.try_wait() {
            break st;
        }
        assert!(Instant::now() < deadline, "biasjig station did not finish");
        std::thread::sleep(Duration::from_millis(50));
    };
    let mut err = String::new();
    if let Some(mut e) = child.0.stderr.take() {
        let _ = e.read_to_string(&mut err);
    }
    assert!(status.success(), "biasjig station exit {status}: {err}");
    let text = std::fs::read_to_string(log).expect("station log");
    let recs: Vec<serde_json::Value> = text
        .lines()
        .skip(before)
        .map(|l| serde_json::from_str(l).expect("log line is JSON"))
        .collect();
    assert_eq!(recs.len(), serials.len(), "one record per board: {text}");
    recs
}

/// Answers of a `fw:` query through the console (data lines).
pub fn fw(s: &mut Session, q: &str) -> Vec<String> {
    s.ok(q)
}

/// The last console command's cost: SysTick ticks and instructions of the instrument's own work,
/// and the instructions the emulated board took standing in for the hardware (left out of the
/// cost: on the part they are the board and its converters).
pub fn cost_of(s: &mut Session) -> (u64, u64, u64) {
    let c = fw(s, "fw:cost?");
    let first = c.first().cloned().unwrap_or_default();
    let ticks = first
        .strip_prefix("cost ")
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("cost: {c:?}"));
    let field = |k: &str| {
        pairs(&first)
            .get(k)
            .and_then(|t| t.parse().ok())
            .unwrap_or(0)
    };
    (ticks, field("instructions"), field("emulated"))
}
