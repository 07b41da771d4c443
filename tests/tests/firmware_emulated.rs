//! The firmware images, built and checked against their budgets, and the emulated jig image booted
//! under QEMU (`netduinoplus2`) and spoken to over its serial port.
//!
//! Needs the `thumbv7em-none-eabihf` Rust target and `qemu-system-arm`; `scripts/firmware-tools.sh`
//! installs both. When either is missing this test fails and says so: it never skips.
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::mpsc;
use std::time::{Duration, Instant};

const FLASH_BUDGET: u64 = 128 * 1024;
const RAM_BUDGET: u64 = 32 * 1024;
const STACK_BUDGET: usize = 16 * 1024;
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

/// Builds both images with the firmware's own workspace and target directory.
fn build_images() -> PathBuf {
    let dir = firmware_dir();
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let out = Command::new(cargo)
        .args(["build", "--release"])
        .current_dir(&dir)
        .env_remove("CARGO_TARGET_DIR")
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
    dir.join("target").join(TARGET).join("release")
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

fn boot(elf: &Path) -> (Qemu, String) {
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
            "none",
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

/// Line reader over the serial port.
struct Port {
    port: Box<dyn serialport::SerialPort>,
    pending: Vec<u8>,
}

impl Port {
    fn open(path: &str) -> Port {
        let port = serialport::new(path, 115_200)
            .timeout(Duration::from_millis(50))
            .open()
            .unwrap_or_else(|e| panic!("open {path}: {e}"));
        Port {
            port,
            pending: Vec::new(),
        }
    }

    fn send(&mut self, bytes: &[u8]) {
        self.port
            .write_all(bytes)
            .expect("write to the emulated jig");
        self.port.flush().expect("flush to the emulated jig");
    }

    /// Next line (without CR/LF) within `wait`, or `None`.
    fn line(&mut self, wait: Duration) -> Option<String> {
        let deadline = Instant::now() + wait;
        loop {
            if let Some(i) = self.pending.iter().position(|&b| b == b'\n') {
                let mut l: Vec<u8> = self.pending.drain(..=i).collect();
                while matches!(l.last(), Some(b'\n' | b'\r')) {
                    l.pop();
                }
                return Some(String::from_utf8_lossy(&l).into_owned());
            }
            if Instant::now() >= deadline {
                return None;
            }
            let mut buf = [0u8; 512];
            match self.port.read(&mut buf) {
                Ok(n) => self.pending.extend_from_slice(&buf[..n]),
                Err(e) if e.kind() == std::io::ErrorKind::TimedOut => {}
                Err(e) => panic!("read from the emulated jig: {e}"),
            }
        }
    }

    /// All lines that arrive until `quiet` passes with nothing new.
    fn lines_until_quiet(&mut self, first_wait: Duration, quiet: Duration) -> Vec<String> {
        let mut out = Vec::new();
        let mut wait = first_wait;
        while let Some(l) = self.line(wait) {
            out.push(l);
            wait = quiet;
        }
        out
    }

    /// Sends a command and collects its whole answer.
    fn ask(&mut self, cmd: &[u8]) -> Vec<String> {
        self.send(cmd);
        self.lines_until_quiet(Duration::from_secs(5), Duration::from_millis(400))
    }
}

#[test]
fn firmware_images_fit_and_emulated_jig_answers() {
    let started = Instant::now();
    let out_dir = build_images();

    for image in IMAGES {
        let (flash, ram) = elf_sizes(&out_dir.join(image));
        println!("{image}: flash {flash} B, static RAM {ram} B");
        assert!(
            flash <= FLASH_BUDGET,
            "{image}: flash {flash} B over the {FLASH_BUDGET} B budget"
        );
        assert!(
            ram <= RAM_BUDGET,
            "{image}: static RAM {ram} B over the {RAM_BUDGET} B budget"
        );
    }

    let (_qemu, pts) = boot(&out_dir.join("jig-emulated"));
    let mut port = Port::open(&pts);

    // QEMU ignores input for about a second after a client opens the pty: send empty lines until
    // one is answered with `ok`.
    let sync_deadline = Instant::now() + Duration::from_secs(10);
    let mut synced = false;
    while Instant::now() < sync_deadline {
        port.send(b"\n");
        if let Some(l) = port.line(Duration::from_millis(300)) {
            if l == "ok" {
                synced = true;
                break;
            }
        }
    }
    assert!(
        synced,
        "the emulated jig never answered an empty line with `ok` within 10 s"
    );
    // Answers to empty lines that were still in flight.
    for l in port.lines_until_quiet(Duration::from_millis(500), Duration::from_millis(300)) {
        assert_eq!(l, "ok", "unexpected line while synchronising");
    }

    let idn = port.ask(b"*IDN?\r\n");
    assert_eq!(idn.len(), 2, "*IDN? answer: {idn:?}");
    assert!(
        idn[0].starts_with("biasjig,jig-reader,jig-emulated,"),
        "identification line: {idn:?}"
    );
    assert_eq!(idn[1], "ok");

    let mut overlong = vec![b'A'; 400];
    overlong.extend_from_slice(b"\r\n");
    let ans = port.ask(&overlong);
    assert_eq!(
        ans.len(),
        1,
        "overlong line must get exactly one status line: {ans:?}"
    );
    assert!(ans[0].starts_with("err "), "overlong line: {ans:?}");

    let ans = port.ask(b"\x01\x7f\xffgarbage ?! 123\r\n");
    assert_eq!(ans, ["err 10 unknown command"], "junk line");
    let ans = port.ask(b"MEAS:NOTHING\n");
    assert_eq!(ans, ["err 10 unknown command"], "unknown command");

    // Empty line still answered after the errors (CRLF and LF both end a line).
    assert_eq!(port.ask(b"\r\n"), ["ok"]);

    // Firmware diagnostics: the emulated jig reads back its simulated nodes, the stack stays in
    // budget, and the cost counter ticks.
    let m = port.ask(b"fw:measure?\n");
    assert_eq!(m.len(), 5, "measure: {m:?}");
    assert!(m[0].starts_with("VCC 1"), "measure: {m:?}");
    assert_eq!(m[4], "ok");
    let cost = port.ask(b"fw:cost?\n");
    let ticks: u64 = cost[0]
        .strip_prefix("cost ")
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("cost: {cost:?}"));
    assert!(ticks > 0, "SysTick cost counter did not tick: {cost:?}");
    let st = port.ask(b"fw:stack?\n");
    let used: usize = st[0]
        .strip_prefix("stack ")
        .and_then(|t| t.split_whitespace().next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("stack: {st:?}"));
    println!("jig-emulated: stack high-water {used} B, last command cost {ticks} ticks");
    assert!(
        used > 0 && used <= STACK_BUDGET,
        "stack high-water {used} B (budget {STACK_BUDGET} B)"
    );

    assert!(
        started.elapsed() < Duration::from_secs(110),
        "test took {:?}",
        started.elapsed()
    );
}
