//! Design files: TOML with our own keys, written by `biasjig design -o FILE` and read by every
//! command with `--design FILE`.
//!
//! ```toml
//! version = 2
//! id = "pump-preamp-a"
//! hash = "9c1e5d0b7a3f2e41"          # design hash of the parts and transistor (the instrument's)
//! digest = "5f0c…"                   # SHA-256 over everything in the file (required)
//!
//! [requirement]                       # optional: what the design was made for
//! vcc = 12.0
//! gain = 15.0
//! # ... rl, rs, ic_max, swing_pp, f_low, series, tol, cap_series, cap_tol
//!
//! [transistor]
//! beta_min = 100.0
//! # ... beta_typ, beta_max, beta_rev, beta_tc, is, early, vce_sat, power_rating, tj_max
//!
//! [ambient]
//! nominal = 25.0
//! min = -10.0
//! max = 55.0
//!
//! [test]                            # the station's test settings (what a verdict depends on)
//! temp_min = 25.0                     # test ambient, °C (not the design's operating range)
//! temp_max = 25.0
//! meter_gain = 0.005                  # meter gain error, fraction of the reading
//! meter_offset = 0.005                # meter offset, V
//! divider_tol = 0.001                 # jig input divider tolerance, fraction
//! input_r = 10000000.0                # optional: measuring-input resistance to ground, Ω
//! inputs = "together"                 # or "one"
//!
//! [parts]
//! polarity = "npn"
//! vcc = 12.0
//! vcc_tol = 0.05                      # supply tolerance: outside it a board is not judged
//! rl = 15000.0                        # optional: no load when absent
//! rs = 600.0
//! r1 = { value = 240000.0, series = "E24", tol = 0.05 }
//! # ... r2, rc, re1, re2, and cin, cout, ce (optional: ideal when absent)
//!
//! [predicted]                         # optional: the figures at nominal when it was written
//! ic = 0.00023
//! # ... vb, ve, vc, vce, gain, swing_pp, f_low, supply_current, transistor_power
//! ```
//! Every table refuses unknown keys; a part value must be a member of its stated series; a file
//! of a newer version is refused; a hash that does not match the parts and transistor is refused.
//!
//! **Change control**: `digest` is required. It is SHA-256 over the canonical encoding of the
//! settings digest's fields ([`biasjig_core::settings`]: stage, transistor, test settings) followed
//! by the rest of the file (identifier, design hash, each part's series, the design ambient, the
//! requirement and the predicted figures), so any edit, a deleted line included, is refused; the
//! file must be written again by `biasjig design -o`. Files are read up to [`MAX_BYTES`] and
//! written atomically (a temporary file beside it, then a rename).
//!
//! By job: [`format`](mod@format) (the TOML shape and the text of a design),
//! [`parse`](mod@parse) (from text to a checked [`DesignDoc`]), [`digest`](mod@digest) (the
//! file digest).

pub mod digest;
pub mod format;
pub mod parse;
#[cfg(test)]
mod tests;

use std::path::{Path, PathBuf};

use biasjig_core::console::record::design_hash;
use biasjig_core::design::Requirement;
use biasjig_core::device::Profile;
use biasjig_core::series::Series;
use biasjig_core::settings::TestSettings;
use biasjig_core::stage::Stage;
use serde::{Deserialize, Serialize};
use thiserror::Error;

use crate::files::{read_limited, write_atomic, ReadError};
pub use digest::digest;
pub use format::to_text;
pub use parse::parse;

/// The design file version this build writes and the only one it reads (version 1 files carry
/// no digest: write them again with `biasjig design -o`).
pub const VERSION: u32 = 2;
/// Largest design file read, bytes (a design file is about 2 KB).
pub const MAX_BYTES: u64 = 256 * 1024;

/// A design file's contents as the commands need them.
#[derive(Debug, Clone)]
pub struct DesignDoc {
    /// The stage with its parts and tolerances.
    pub stage: Stage,
    /// The transistor profile.
    pub profile: Profile,
    /// Nominal ambient, °C.
    pub temp_c: f64,
    /// Lowest ambient of the requirement, °C.
    pub temp_min: f64,
    /// Highest ambient of the requirement, °C.
    pub temp_max: f64,
    /// Identifier of the design (for logs).
    pub id: String,
    /// Hash of the design's parts and profile (hex), for logs and the instrument hand-over.
    pub hash: String,
    /// The requirement the design was made for, if the file states it.
    pub requirement: Option<Requirement>,
    /// The series of each part R1, R2, RC, RE1, RE2, CIN, COUT, CE (`None`: not stated).
    pub series: [Option<Series>; 8],
    /// The predicted figures at nominal when the file was written.
    pub predicted: Option<Predicted>,
    /// What the design holds over the spread when the file was written.
    pub held: Option<HeldFigures>,
    /// The test settings the file states (test ambient, meter, measuring inputs).
    pub test: TestSettings,
    /// The file digest (64 hex digits).
    pub digest: String,
}

/// Figures predicted at nominal (SI units).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Predicted {
    /// Collector current, A.
    pub ic: f64,
    /// Base voltage, V.
    pub vb: f64,
    /// Emitter voltage, V.
    pub ve: f64,
    /// Collector voltage, V.
    pub vc: f64,
    /// VC − VE, V.
    pub vce: f64,
    /// v(load)/v(source EMF), signed.
    pub gain: f64,
    /// Largest undistorted peak-to-peak swing at the load, V.
    pub swing_pp: f64,
    /// Low corner, sum of the poles, Hz.
    pub f_low: f64,
    /// Supply current, A.
    pub supply_current: f64,
    /// Transistor dissipation, W.
    pub transistor_power: f64,
}

/// What the design holds at every corner of the spread when it was written (SI units).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HeldFigures {
    /// Least |gain| over the corners.
    pub gain_min: f64,
    /// Largest |gain| over the corners.
    pub gain_max: f64,
    /// Least peak-to-peak swing at the load over the corners, V.
    pub swing_pp_min: f64,
    /// Largest IC over the corners, A.
    pub ic_max: f64,
}

/// Why a design file could not be read or written (exit 2).
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum DesignFileError {
    /// The file could not be read (or is too large, or not text).
    #[error(transparent)]
    Read(#[from] ReadError),
    /// The text is not a design file's TOML (a syntax error, an unknown or missing key).
    #[error("--design: {}: {message}", .path.display())]
    Syntax {
        /// The file.
        path: PathBuf,
        /// What the TOML reader says.
        message: String,
    },
    /// A key holds what a design file may not hold.
    #[error("--design: {}: {key}: {why}", .path.display())]
    Key {
        /// The file.
        path: PathBuf,
        /// The key, such as `parts.r1.value`.
        key: String,
        /// What is wrong and what is allowed.
        why: String,
    },
    /// The design could not be put into TOML.
    #[error("design file: cannot write: {0}")]
    Encode(#[from] toml::ser::Error),
    /// The file to write exists and `--force` was not given.
    #[error("-o: {}: exists: give --force to replace it, or another file name", .path.display())]
    Exists {
        /// The file.
        path: PathBuf,
    },
    /// The file could not be written.
    #[error("-o: {}: cannot write: {why}", .path.display())]
    Write {
        /// The file.
        path: PathBuf,
        /// Why.
        why: std::io::Error,
    },
}

/// The design hash: the core's one definition
/// ([`biasjig_core::console::record::design_hash`], FNV-1a 64 over the canonical binary encoding
/// of the stage and the transistor), as 16 lower-case hex digits. The instrument's `hash` answer
/// and the board log carry the same number for the same stage and profile.
pub fn hash(stage: &Stage, profile: &Profile) -> String {
    format!("{:016x}", design_hash(stage, profile))
}

/// Read a design file (at most [`MAX_BYTES`]: a larger input, `/dev/zero` say, is refused
/// without being read whole).
pub fn load(path: &Path) -> Result<DesignDoc, DesignFileError> {
    let text = read_limited(path, MAX_BYTES, "--design")?;
    parse(path, &text)
}

/// Write a design file: refused when `path` exists unless `force`; written atomically (a
/// temporary file beside it, synced, then renamed over it), so a reader never sees half a file.
pub fn save(path: &Path, doc: &DesignDoc, force: bool) -> Result<(), DesignFileError> {
    if !force && path.exists() {
        return Err(DesignFileError::Exists {
            path: path.to_path_buf(),
        });
    }
    let text = to_text(doc)?;
    let body = format!("# biasjig design file: written by `biasjig design`\n{text}");
    write_atomic(path, body.as_bytes()).map_err(|why| DesignFileError::Write {
        path: path.to_path_buf(),
        why,
    })
}
