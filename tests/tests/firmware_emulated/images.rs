//! The firmware images: built once per test run with the firmware's own workspace, and their
//! flash and RAM read from the ELF headers.
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::{Mutex, OnceLock};

pub const IMAGES: [&str; 2] = ["jig-stm32f411", "jig-emulated"];

pub const TARGET: &str = "thumbv7em-none-eabihf";

pub fn firmware_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("..")
        .join("firmware-example")
}

pub fn setup_hint() -> &'static str {
    "install the firmware tools with `bash scripts/firmware-tools.sh` (as root)"
}

/// Builds both default images (the whole console: design search and Monte Carlo) once per
/// test run (the tests share the build).
pub fn images() -> PathBuf {
    static BUILT: OnceLock<PathBuf> = OnceLock::new();
    static LOCK: Mutex<()> = Mutex::new(());
    let _g = LOCK.lock().unwrap_or_else(|e| e.into_inner());
    BUILT.get_or_init(|| build_images(false)).clone()
}

/// Builds both images of the budget build for parts with 128 KiB of flash
/// (`--no-default-features`: no design search, no Monte Carlo), once per test run, in a target
/// directory of their own.
pub fn budget_images() -> PathBuf {
    static BUILT: OnceLock<PathBuf> = OnceLock::new();
    static LOCK: Mutex<()> = Mutex::new(());
    let _g = LOCK.lock().unwrap_or_else(|e| e.into_inner());
    BUILT.get_or_init(|| build_images(true)).clone()
}

/// Builds both images with the firmware's own workspace: the default build (`cargo build
/// --release`, as the contract says) in its own target directory, the budget one beside it.
pub fn build_images(budget: bool) -> PathBuf {
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
pub fn elf_sizes(path: &Path) -> (u64, u64) {
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
