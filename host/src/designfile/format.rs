//! The TOML shape of a design file (our own keys; every table refuses unknown keys) and the
//! text of a design.

use biasjig_core::series::Series;
use biasjig_core::stage::{Part, Polarity};
use serde::{Deserialize, Serialize};

use super::{digest, hash, DesignDoc, DesignFileError, HeldFigures, Predicted, VERSION};

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FileDoc {
    pub(super) version: u32,
    pub(super) id: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) hash: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) digest: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) requirement: Option<FileRequirement>,
    pub(super) transistor: FileTransistor,
    pub(super) ambient: FileAmbient,
    pub(super) test: FileTest,
    pub(super) parts: FileParts,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) predicted: Option<Predicted>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) held: Option<HeldFigures>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FileRequirement {
    pub(super) vcc: f64,
    pub(super) gain: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) rl: Option<f64>,
    pub(super) rs: f64,
    pub(super) ic_max: f64,
    pub(super) swing_pp: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) f_low: Option<f64>,
    pub(super) series: String,
    pub(super) tol: f64,
    pub(super) cap_series: String,
    pub(super) cap_tol: f64,
    /// "worst-case" or "nominal" (absent in files of the first round: nominal).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) hold: Option<String>,
    /// Gain tolerance, fraction (absent: the first round's 5 %).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) gain_tol: Option<f64>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FileTransistor {
    pub(super) beta_min: f64,
    pub(super) beta_typ: f64,
    pub(super) beta_max: f64,
    pub(super) beta_rev: f64,
    pub(super) beta_tc: f64,
    pub(super) is: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) early: Option<f64>,
    pub(super) vce_sat: f64,
    pub(super) power_rating: f64,
    pub(super) tj_max: f64,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FileAmbient {
    pub(super) nominal: f64,
    pub(super) min: f64,
    pub(super) max: f64,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FileTest {
    pub(super) temp_min: f64,
    pub(super) temp_max: f64,
    pub(super) meter_gain: f64,
    pub(super) meter_offset: f64,
    pub(super) divider_tol: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) input_r: Option<f64>,
    pub(super) inputs: String,
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FilePart {
    pub(super) value: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) series: Option<String>,
    pub(super) tol: f64,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FileParts {
    pub(super) polarity: String,
    pub(super) vcc: f64,
    pub(super) vcc_tol: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) rl: Option<f64>,
    pub(super) rs: f64,
    pub(super) r1: FilePart,
    pub(super) r2: FilePart,
    pub(super) rc: FilePart,
    pub(super) re1: FilePart,
    pub(super) re2: FilePart,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) cin: Option<FilePart>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) cout: Option<FilePart>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub(super) ce: Option<FilePart>,
}

fn file_part(p: Part, s: Option<Series>) -> FilePart {
    FilePart {
        value: p.value,
        series: s.map(|s| s.name().to_string()),
        tol: p.tol,
    }
}

/// The TOML text of a design.
pub fn to_text(doc: &DesignDoc) -> Result<String, DesignFileError> {
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
    Ok(toml::to_string(&f)?)
}
