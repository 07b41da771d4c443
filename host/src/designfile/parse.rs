//! From the text of a design file to a checked [`DesignDoc`]: the version first, then every
//! key, every part's series, the design hash and the digest.

use std::path::Path;

use biasjig_core::design::{Hold, Requirement};
use biasjig_core::device::Profile;
use biasjig_core::limits::Meter;
use biasjig_core::series::Series;
use biasjig_core::settings::{Digest, InputMode, Inputs, TestSettings};
use biasjig_core::stage::{Part, Polarity, Stage};

use super::format::{FileDoc, FilePart};
use super::{digest, hash, DesignDoc, DesignFileError, VERSION};

fn bad(path: &Path, key: &str, why: impl std::fmt::Display) -> DesignFileError {
    DesignFileError::Key {
        path: path.to_path_buf(),
        key: key.to_string(),
        why: why.to_string(),
    }
}

fn series_of(path: &Path, key: &str, text: &str) -> Result<Series, DesignFileError> {
    Series::parse(text).map_err(|_| {
        bad(
            path,
            key,
            format!("{text:?} is not a series; allowed: E3, E6, E12, E24, E48, E96, E192"),
        )
    })
}

fn part(path: &Path, key: &str, p: &FilePart) -> Result<(Part, Option<Series>), DesignFileError> {
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

/// Parse the text of a design file (`path` only names it in messages).
pub fn parse(path: &Path, text: &str) -> Result<DesignDoc, DesignFileError> {
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
    let f: FileDoc = toml::from_str(text).map_err(|e| DesignFileError::Syntax {
        path: path.to_path_buf(),
        message: e.message().to_string(),
    })?;
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
    let mut get = |k: usize, key: &str, p: &FilePart| -> Result<Part, DesignFileError> {
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
