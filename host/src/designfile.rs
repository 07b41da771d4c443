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

use std::path::Path;

use biasjig_core::console::record::design_hash;
use biasjig_core::design::{Hold, Requirement};
use biasjig_core::device::Profile;
use biasjig_core::limits::Meter;
use biasjig_core::series::Series;
use biasjig_core::settings::{Canonical, Digest, InputMode, Inputs, TestSettings};
use biasjig_core::stage::{Part, Polarity, Stage};
use serde::{Deserialize, Serialize};

use crate::error::CliError;

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

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileDoc {
    version: u32,
    id: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    hash: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    digest: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    requirement: Option<FileRequirement>,
    transistor: FileTransistor,
    ambient: FileAmbient,
    test: FileTest,
    parts: FileParts,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    predicted: Option<Predicted>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    held: Option<HeldFigures>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileRequirement {
    vcc: f64,
    gain: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    rl: Option<f64>,
    rs: f64,
    ic_max: f64,
    swing_pp: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    f_low: Option<f64>,
    series: String,
    tol: f64,
    cap_series: String,
    cap_tol: f64,
    /// "worst-case" or "nominal" (absent in files of the first round: nominal).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    hold: Option<String>,
    /// Gain tolerance, fraction (absent: the first round's 5 %).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    gain_tol: Option<f64>,
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

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileTransistor {
    beta_min: f64,
    beta_typ: f64,
    beta_max: f64,
    beta_rev: f64,
    beta_tc: f64,
    is: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    early: Option<f64>,
    vce_sat: f64,
    power_rating: f64,
    tj_max: f64,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileAmbient {
    nominal: f64,
    min: f64,
    max: f64,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileTest {
    temp_min: f64,
    temp_max: f64,
    meter_gain: f64,
    meter_offset: f64,
    divider_tol: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    input_r: Option<f64>,
    inputs: String,
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FilePart {
    value: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    series: Option<String>,
    tol: f64,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileParts {
    polarity: String,
    vcc: f64,
    vcc_tol: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    rl: Option<f64>,
    rs: f64,
    r1: FilePart,
    r2: FilePart,
    rc: FilePart,
    re1: FilePart,
    re2: FilePart,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    cin: Option<FilePart>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    cout: Option<FilePart>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    ce: Option<FilePart>,
}

/// The design hash: the core's one definition
/// ([`biasjig_core::console::record::design_hash`], FNV-1a 64 over the canonical binary encoding
/// of the stage and the transistor), as 16 lower-case hex digits. The instrument's `hash` answer
/// and the board log carry the same number for the same stage and profile.
pub fn hash(stage: &Stage, profile: &Profile) -> String {
    format!("{:016x}", design_hash(stage, profile))
}

fn bad(path: &Path, key: &str, msg: impl std::fmt::Display) -> CliError {
    CliError::usage(format!("--design: {}: {key}: {msg}", path.display()))
}

fn series_of(path: &Path, key: &str, text: &str) -> Result<Series, CliError> {
    Series::parse(text).map_err(|_| {
        bad(
            path,
            key,
            format!("{text:?} is not a series; allowed: E3, E6, E12, E24, E48, E96, E192"),
        )
    })
}

fn part(path: &Path, key: &str, p: &FilePart) -> Result<(Part, Option<Series>), CliError> {
    let series = match &p.series {
        Some(t) => Some(series_of(path, &format!("parts.{key}.series"), t)?),
        None => None,
    };
    if let Some(s) = series {
        if p.value != 0.0 && !s.contains(p.value) {
            return Err(bad(
                path,
                &format!("parts.{key}.value"),
                format!("{} is not a member of {}", p.value, s.name()),
            ));
        }
    }
    Ok((Part::new(p.value, p.tol), series))
}

/// Read a design file (at most [`MAX_BYTES`]: a larger input, `/dev/zero` say, is refused
/// without being read whole).
pub fn load(path: &Path) -> Result<DesignDoc, CliError> {
    let text = read_limited(path, MAX_BYTES, "--design")?;
    parse(path, &text)
}

/// Read a text file of at most `max` bytes; `flag` names it in messages.
pub fn read_limited(path: &Path, max: u64, flag: &str) -> Result<String, CliError> {
    use std::io::Read as _;
    let cannot = |e: std::io::Error| {
        CliError::usage(format!("{flag}: {}: cannot read: {e}", path.display()))
    };
    let file = std::fs::File::open(path).map_err(cannot)?;
    let mut bytes = Vec::new();
    file.take(max + 1).read_to_end(&mut bytes).map_err(cannot)?;
    if bytes.len() as u64 > max {
        return Err(CliError::field(
            flag,
            path.display(),
            format!("larger than {max} bytes: allowed: a file of at most {max} bytes"),
        ));
    }
    String::from_utf8(bytes).map_err(|e| {
        CliError::field(
            flag,
            path.display(),
            format!(
                "not UTF-8 text (byte {}): allowed: a UTF-8 text file",
                e.utf8_error().valid_up_to()
            ),
        )
    })
}

/// Parse the text of a design file (`path` only names it in messages).
pub fn parse(path: &Path, text: &str) -> Result<DesignDoc, CliError> {
    // The version first, so a newer file gets that message rather than one about its keys.
    if let Ok(table) = text.parse::<toml::Table>() {
        match table.get("version").and_then(toml::Value::as_integer) {
            Some(v) if v > i64::from(VERSION) => {
                return Err(bad(
                    path,
                    "version",
                    format!("{v} is newer than this build reads (up to {VERSION}); update biasjig"),
                ))
            }
            Some(v) if v < i64::from(VERSION) => {
                return Err(bad(
                    path,
                    "version",
                    format!(
                        "{v}: written before design files carried a digest; allowed: {VERSION}; \
                         write it again with biasjig design -o"
                    ),
                ))
            }
            _ => {}
        }
    }
    let f: FileDoc = toml::from_str(text)
        .map_err(|e| CliError::usage(format!("--design: {}: {}", path.display(), e.message())))?;
    let polarity = match f.parts.polarity.as_str() {
        "npn" => Polarity::Npn,
        "pnp" => Polarity::Pnp,
        other => {
            return Err(bad(
                path,
                "parts.polarity",
                format!("{other:?}: allowed: \"npn\" or \"pnp\""),
            ))
        }
    };
    let mut series = [None; 8];
    let mut get = |k: usize, key: &str, p: &FilePart| -> Result<Part, CliError> {
        let (part, s) = part(path, key, p)?;
        if let Some(slot) = series.get_mut(k) {
            *slot = s;
        }
        Ok(part)
    };
    let r1 = get(0, "r1", &f.parts.r1)?;
    let r2 = get(1, "r2", &f.parts.r2)?;
    let rc = get(2, "rc", &f.parts.rc)?;
    let re1 = get(3, "re1", &f.parts.re1)?;
    let re2 = get(4, "re2", &f.parts.re2)?;
    let cin = f.parts.cin.as_ref().map(|p| get(5, "cin", p)).transpose()?;
    let cout = f
        .parts
        .cout
        .as_ref()
        .map(|p| get(6, "cout", p))
        .transpose()?;
    let ce = f.parts.ce.as_ref().map(|p| get(7, "ce", p)).transpose()?;
    let stage = Stage {
        polarity,
        vcc: Part::new(f.parts.vcc, f.parts.vcc_tol),
        r1,
        r2,
        rc,
        re1,
        re2,
        rl: f.parts.rl,
        rs: f.parts.rs,
        cin,
        cout,
        ce,
    };
    stage.validate().map_err(|e| bad(path, "parts", e))?;
    let t = &f.transistor;
    let profile = Profile {
        beta_min: t.beta_min,
        beta_typ: t.beta_typ,
        beta_max: t.beta_max,
        beta_rev: t.beta_rev,
        beta_tc: t.beta_tc,
        is_25: t.is,
        early: t.early,
        vce_sat: t.vce_sat,
        power_25: t.power_rating,
        tj_max: t.tj_max,
    };
    profile.validate().map_err(|e| bad(path, "transistor", e))?;
    let a = &f.ambient;
    if !(a.min <= a.nominal && a.nominal <= a.max && a.min >= -55.0 && a.max <= 150.0) {
        return Err(bad(
            path,
            "ambient",
            format!(
                "min {} nominal {} max {}: need -55 <= min <= nominal <= max <= 150 °C",
                a.min, a.nominal, a.max
            ),
        ));
    }
    let t = &f.test;
    let test = TestSettings {
        signal: biasjig_core::signaltest::SignalMeter::DEFAULT,
        temp_min_c: t.temp_min,
        temp_max_c: t.temp_max,
        meter: Meter {
            gain_error: t.meter_gain,
            offset: t.meter_offset,
            divider_tol: t.divider_tol,
        },
        inputs: Inputs {
            r: t.input_r,
            mode: InputMode::parse(&t.inputs).ok_or_else(|| {
                bad(
                    path,
                    "test.inputs",
                    format!("{:?}: allowed: \"together\" or \"one\"", t.inputs),
                )
            })?,
        },
    };
    test.validate().map_err(|e| bad(path, "test", e))?;
    let computed = hash(&stage, &profile);
    if let Some(h) = &f.hash {
        if !h.eq_ignore_ascii_case(&computed) {
            return Err(bad(
                path,
                "hash",
                format!(
                    "{h} does not match the parts and transistor ({computed}): the file was changed \
                     after it was written; write it again with biasjig design -o"
                ),
            ));
        }
    }
    let requirement = match &f.requirement {
        Some(r) => {
            let mut q = Requirement::new(r.vcc, r.gain);
            q.polarity = polarity;
            q.rl = r.rl;
            q.rs = r.rs;
            q.ic_max = r.ic_max;
            q.swing_pp = r.swing_pp;
            q.f_low = r.f_low;
            q.temp = a.nominal;
            q.temp_min = a.min;
            q.temp_max = a.max;
            q.series = series_of(path, "requirement.series", &r.series)?;
            q.tol = r.tol;
            q.cap_series = series_of(path, "requirement.cap_series", &r.cap_series)?;
            q.cap_tol = r.cap_tol;
            if let Some(h) = &r.hold {
                q.hold = Hold::parse(h).ok_or_else(|| {
                    bad(
                        path,
                        "requirement.hold",
                        format!("{h:?}: allowed: \"worst-case\" or \"nominal\""),
                    )
                })?;
            }
            if let Some(t) = r.gain_tol {
                q.gain_tol = t;
            }
            q.validate().map_err(|e| {
                bad(
                    path,
                    &format!("requirement.{}", e.field().replace('-', "_")),
                    e,
                )
            })?;
            Some(q)
        }
        None => None,
    };
    let mut doc = DesignDoc {
        stage,
        profile,
        temp_c: a.nominal,
        temp_min: a.min,
        temp_max: a.max,
        id: f.id,
        hash: computed,
        requirement,
        series,
        predicted: f.predicted,
        held: f.held,
        test,
        digest: String::new(),
    };
    let want = digest(&doc).to_string();
    match &f.digest {
        None => {
            return Err(bad(
                path,
                "digest",
                "missing: a design file must carry the digest `biasjig design -o` writes (it \
                 covers everything in the file); write the file again",
            ))
        }
        Some(d) if Digest::parse(d).map(|d| d.to_string()).as_deref() != Some(want.as_str()) => {
            return Err(bad(
                path,
                "digest",
                format!(
                    "{d} does not match the file's contents: the file was changed after it was \
                     written (or written by an earlier build whose digest covered less); write it \
                     again with biasjig design -o (no edit is accepted)"
                ),
            ))
        }
        Some(_) => {}
    }
    // The design hash is what the log and the instrument identify the design by: a file without
    // it was edited (docs/interface.md: a deleted `hash` line is refused like any edit), even
    // though the digest, which covers the hash computed from the parts, still matches.
    if f.hash.is_none() {
        return Err(bad(
            path,
            "hash",
            "missing: a design file must carry the design hash `biasjig design -o` writes; \
             write the file again (no edit is accepted)",
        ));
    }
    doc.digest = want;
    Ok(doc)
}

/// The file digest: SHA-256 over the settings digest's fields followed by the rest of the file
/// (see the module notes). Every value the file holds is in it.
pub fn digest(doc: &DesignDoc) -> Digest {
    let mut c = Canonical::new();
    c.settings(&doc.stage, &doc.profile, &doc.test);
    c.bytes(b"design-file");
    c.u8(2);
    c.str(&doc.id);
    c.str(&doc.hash);
    for s in doc.series {
        match s {
            None => c.u8(0),
            Some(s) => {
                c.u8(1);
                c.str(s.name());
            }
        }
    }
    for t in [doc.temp_c, doc.temp_min, doc.temp_max] {
        c.f64(t);
    }
    match &doc.requirement {
        None => c.u8(0),
        Some(r) => {
            c.u8(1);
            c.f64(r.vcc);
            c.f64(r.gain);
            c.opt(r.rl);
            c.f64(r.rs);
            c.f64(r.ic_max);
            c.f64(r.swing_pp);
            c.opt(r.f_low);
            c.str(r.series.name());
            c.f64(r.tol);
            c.str(r.cap_series.name());
            c.f64(r.cap_tol);
            c.str(r.hold.name());
            c.f64(r.gain_tol);
        }
    }
    match &doc.predicted {
        None => c.u8(0),
        Some(p) => {
            c.u8(1);
            for v in [
                p.ic,
                p.vb,
                p.ve,
                p.vc,
                p.vce,
                p.gain,
                p.swing_pp,
                p.f_low,
                p.supply_current,
                p.transistor_power,
            ] {
                c.f64(v);
            }
        }
    }
    match &doc.held {
        None => c.u8(0),
        Some(h) => {
            c.u8(1);
            for v in [h.gain_min, h.gain_max, h.swing_pp_min, h.ic_max] {
                c.f64(v);
            }
        }
    }
    c.finish()
}

fn file_part(p: Part, s: Option<Series>) -> FilePart {
    FilePart {
        value: p.value,
        series: s.map(|s| s.name().to_string()),
        tol: p.tol,
    }
}

/// The TOML text of a design.
pub fn to_text(doc: &DesignDoc) -> Result<String, CliError> {
    let s = &doc.stage;
    let sr = |k: usize| doc.series.get(k).copied().flatten();
    let f = FileDoc {
        version: VERSION,
        id: doc.id.clone(),
        hash: Some(hash(&doc.stage, &doc.profile)),
        digest: Some(
            digest(&DesignDoc {
                hash: hash(&doc.stage, &doc.profile),
                ..doc.clone()
            })
            .to_string(),
        ),
        requirement: doc.requirement.map(|r| FileRequirement {
            vcc: r.vcc,
            gain: r.gain,
            rl: r.rl,
            rs: r.rs,
            ic_max: r.ic_max,
            swing_pp: r.swing_pp,
            f_low: r.f_low,
            series: r.series.name().to_string(),
            tol: r.tol,
            cap_series: r.cap_series.name().to_string(),
            cap_tol: r.cap_tol,
            hold: Some(r.hold.name().to_string()),
            gain_tol: Some(r.gain_tol),
        }),
        transistor: FileTransistor {
            beta_min: doc.profile.beta_min,
            beta_typ: doc.profile.beta_typ,
            beta_max: doc.profile.beta_max,
            beta_rev: doc.profile.beta_rev,
            beta_tc: doc.profile.beta_tc,
            is: doc.profile.is_25,
            early: doc.profile.early,
            vce_sat: doc.profile.vce_sat,
            power_rating: doc.profile.power_25,
            tj_max: doc.profile.tj_max,
        },
        ambient: FileAmbient {
            nominal: doc.temp_c,
            min: doc.temp_min,
            max: doc.temp_max,
        },
        test: FileTest {
            temp_min: doc.test.temp_min_c,
            temp_max: doc.test.temp_max_c,
            meter_gain: doc.test.meter.gain_error,
            meter_offset: doc.test.meter.offset,
            divider_tol: doc.test.meter.divider_tol,
            input_r: doc.test.inputs.r,
            inputs: doc.test.inputs.mode.name().to_string(),
        },
        parts: FileParts {
            polarity: match s.polarity {
                Polarity::Npn => "npn".into(),
                Polarity::Pnp => "pnp".into(),
            },
            vcc: s.vcc.value,
            vcc_tol: s.vcc.tol,
            rl: s.rl,
            rs: s.rs,
            r1: file_part(s.r1, sr(0)),
            r2: file_part(s.r2, sr(1)),
            rc: file_part(s.rc, sr(2)),
            re1: file_part(s.re1, sr(3)),
            re2: file_part(s.re2, sr(4)),
            cin: s.cin.map(|p| file_part(p, sr(5))),
            cout: s.cout.map(|p| file_part(p, sr(6))),
            ce: s.ce.map(|p| file_part(p, sr(7))),
        },
        predicted: doc.predicted,
        held: doc.held,
    };
    toml::to_string(&f).map_err(|e| CliError::usage(format!("design file: cannot write: {e}")))
}

/// Write a design file: refused when `path` exists unless `force`; written atomically (a
/// temporary file beside it, synced, then renamed over it), so a reader never sees half a file.
pub fn save(path: &Path, doc: &DesignDoc, force: bool) -> Result<(), CliError> {
    if !force && path.exists() {
        return Err(CliError::field(
            "-o",
            path.display(),
            "exists: give --force to replace it, or another file name",
        ));
    }
    let text = to_text(doc)?;
    let body = format!("# biasjig design file: written by `biasjig design`\n{text}");
    write_atomic(path, body.as_bytes())
        .map_err(|e| CliError::usage(format!("-o: {}: cannot write: {e}", path.display())))
}

/// Write `bytes` to `path` atomically: a temporary file in the same directory, synced, then
/// renamed over `path` (the old file, if any, stays whole until the rename).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    use std::io::Write as _;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map_or_else(|| "file".into(), |n| n.to_string_lossy().into_owned());
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    fn doc() -> DesignDoc {
        let stage = Stage {
            polarity: Polarity::Npn,
            vcc: Part::new(12.0, 0.0),
            r1: Part::new(240e3, 0.05),
            r2: Part::new(51e3, 0.05),
            rc: Part::new(33e3, 0.05),
            re1: Part::new(560.0, 0.05),
            re2: Part::new(5.6e3, 0.05),
            rl: Some(15e3),
            rs: 600.0,
            cin: Some(Part::new(10e-6, 0.2)),
            cout: Some(Part::new(10e-6, 0.2)),
            ce: Some(Part::new(68e-6, 0.2)),
        };
        let profile = Profile {
            beta_min: 100.0,
            beta_typ: 173.0,
            beta_max: 300.0,
            ..Profile::default()
        };
        let mut req = Requirement::new(12.0, 15.0);
        req.rl = Some(15e3);
        req.temp_min = -10.0;
        req.temp_max = 55.0;
        let e24 = Some(Series::E24);
        let e6 = Some(Series::E6);
        DesignDoc {
            stage,
            profile,
            temp_c: 25.0,
            temp_min: -10.0,
            temp_max: 55.0,
            id: "test-a".into(),
            hash: hash(&stage, &profile),
            requirement: Some(req),
            series: [e24, e24, e24, e24, e24, e6, e6, e6],
            predicted: None,
            held: None,
            test: TestSettings::DEFAULT,
            digest: String::new(),
        }
    }

    #[test]
    fn the_hash_is_the_instruments() {
        let d = doc();
        let h = hash(&d.stage, &d.profile);
        assert_eq!(h, format!("{:016x}", design_hash(&d.stage, &d.profile)));
        assert_eq!(h.len(), 16);
        let mut other = d.stage;
        other.rc.value = 36e3;
        assert_ne!(hash(&other, &d.profile), h, "the hash follows the parts");
    }

    #[test]
    fn round_trip() {
        let d = doc();
        let text = to_text(&d).unwrap();
        let back = parse(Path::new("x.toml"), &text).unwrap();
        assert_eq!(back.stage, d.stage);
        assert_eq!(back.profile, d.profile);
        assert_eq!(back.hash, d.hash);
        assert_eq!(back.requirement, d.requirement);
        assert_eq!(back.series, d.series);
        assert_eq!(back.id, "test-a");
        assert_eq!(back.test, d.test);
        assert_eq!(back.digest, digest(&back).to_string());
    }

    /// Item 8 of issue 11: before the digest, an edited [ambient] kept its hash, a file with the
    /// hash line deleted loaded with any edit, and a part without `series` took any value.
    #[test]
    fn no_edit_is_accepted() {
        let text = to_text(&doc()).unwrap();
        let p = Path::new("x.toml");
        assert!(parse(p, &text).is_ok());
        let err = |t: &str| parse(p, t).unwrap_err().message;
        let no_hash: String = text
            .lines()
            .filter(|l| !l.starts_with("hash = "))
            .map(|l| format!("{l}\n"))
            .collect();
        // Without the design hash line the file is refused like any other edit
        // (docs/interface.md), though the digest alone would still match.
        let m = err(&no_hash);
        assert!(m.contains("hash") && m.contains("missing"), "{m}");
        let m = err(&text.replace("min = -10.0", "min = -20.0"));
        assert!(m.contains("digest"), "an [ambient] edit: {m}");
        let m = err(&no_hash.replace("value = 33000.0", "value = 36000.0"));
        assert!(
            m.contains("digest"),
            "a part edit without the hash line: {m}"
        );
        let off_series = no_hash.replace(
            "[parts.r1]\nvalue = 240000.0\nseries = \"E24\"\n",
            "[parts.r1]\nvalue = 250000.0\n",
        );
        assert_ne!(off_series, no_hash);
        let m = err(&off_series);
        assert!(
            m.contains("digest"),
            "an off-series value without series: {m}"
        );
        let m = err(&text.replace("temp_max = 25.0", "temp_max = 40.0"));
        assert!(m.contains("digest"), "a test ambient edit: {m}");
        let m = err(&no_hash.replace("vcc_tol = 0.0", "vcc_tol = 0.2"));
        assert!(m.contains("digest"), "a supply tolerance edit: {m}");
        let no_digest: String = text
            .lines()
            .filter(|l| !l.starts_with("digest = "))
            .map(|l| format!("{l}\n"))
            .collect();
        let m = err(&no_digest);
        assert!(m.contains("digest") && m.contains("missing"), "{m}");
    }

    #[test]
    fn oversized_input_is_refused_without_reading_it_whole() {
        // /dev/zero never ends: the read stops one byte past the limit.
        let e = load(Path::new("/dev/zero")).unwrap_err();
        assert!(e.message.contains("at most"), "{}", e.message);
    }

    #[test]
    fn save_refuses_to_overwrite_and_replaces_atomically() {
        let dir = std::env::temp_dir().join(format!("biasjig-df-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("a.toml");
        let _ = std::fs::remove_file(&path);
        save(&path, &doc(), false).unwrap();
        let e = save(&path, &doc(), false).unwrap_err();
        assert!(e.message.contains("--force"), "{}", e.message);
        save(&path, &doc(), true).unwrap();
        assert!(load(&path).is_ok());
        let left: Vec<_> = std::fs::read_dir(&dir)
            .unwrap()
            .filter_map(|e| e.ok())
            .filter(|e| e.file_name().to_string_lossy().contains(".tmp-"))
            .collect();
        assert!(left.is_empty(), "no temporary file left behind");
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn refusals_name_the_key() {
        let text = to_text(&doc()).unwrap();
        let p = Path::new("x.toml");
        let err = |t: &str| parse(p, t).unwrap_err().message;
        let m = err(&text.replace("version = 2", "version = 3"));
        assert!(m.contains("version") && m.contains("newer"), "{m}");
        let m = err(&text.replace("version = 2", "version = 1"));
        assert!(m.contains("version") && m.contains("design -o"), "{m}");
        let m = err(&text.replace("[ambient]", "[ambient]\nhumidity = 3"));
        assert!(m.contains("humidity"), "{m}");
        let m = err(&text.replace("beta_min = 100.0\n", ""));
        assert!(m.contains("beta_min"), "{m}");
        let m = err(&text.replace("value = 240000.0", "value = 250000.0"));
        assert!(m.contains("parts.r1.value") && m.contains("E24"), "{m}");
        let m = err(&text.replace("value = 33000.0", "value = 36000.0"));
        assert!(m.contains("hash"), "{m}");
        let m = err(&text.replace("polarity = \"npn\"", "polarity = \"fet\""));
        assert!(m.contains("parts.polarity"), "{m}");
    }
}
