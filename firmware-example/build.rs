//! Puts memory.x where the linker finds it (cortex-m-rt's link.x includes it).
use std::{env, fs, io, path::PathBuf};

fn main() -> io::Result<()> {
    let out = PathBuf::from(env::var_os("OUT_DIR").ok_or(io::Error::new(
        io::ErrorKind::NotFound,
        "OUT_DIR is not set (cargo sets it for build scripts)",
    ))?);
    fs::copy("memory.x", out.join("memory.x"))?;
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rerun-if-changed=memory.x");
    println!("cargo:rerun-if-changed=build.rs");
    Ok(())
}
