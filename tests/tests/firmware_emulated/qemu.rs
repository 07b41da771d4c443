//! QEMU: the emulated jig image booted on `netduinoplus2`, its serial port on a pseudo-terminal,
//! its monitor on a Unix socket.
use crate::host::forward_lines;
use crate::images::setup_hint;
use std::io::{Read, Write};
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::mpsc;
use std::time::{Duration, Instant};

/// QEMU, killed when dropped, whatever happened in the test.
pub struct Qemu(Child);

impl Drop for Qemu {
    fn drop(&mut self) {
        let _ = self.0.kill();
        let _ = self.0.wait();
    }
}

/// Boots an image under QEMU with its first serial port on a pseudo-terminal; gives the guard
/// and the terminal's path.
pub fn boot(elf: &Path) -> (Qemu, String) {
    boot_with(elf, None)
}

/// As [`boot`], with QEMU's monitor on a Unix socket at `monitor` (for `system_reset`).
pub fn boot_with(elf: &Path, monitor: Option<&Path>) -> (Qemu, String) {
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
    if let Some(out) = child.stdout.take() {
        forward_lines(out, tx.clone());
    }
    if let Some(err) = child.stderr.take() {
        forward_lines(err, tx);
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

/// Sends one command to QEMU's monitor on its Unix socket.
pub fn monitor(path: &Path, command: &str) {
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
