//! The lines that put the design and every test setting onto the instrument, and the settings
//! digest and design hash the instrument must then report.

use biasjig_core::console::record::design_hash;
use biasjig_core::device::Profile;
use biasjig_core::settings::{digest, TestSettings, DEFAULT_TEMP_C};
use biasjig_core::stage::{Polarity, Resistor, Stage};

use crate::local::local_console;

/// The lines that put everything a verdict depends on onto the instrument: the stage (parts,
/// tolerances, supply tolerance), the transistor, the test ambient, the meter and the measuring
/// inputs (exact values: shortest round-trip decimal forms).
pub fn push_lines(stage: &Stage, profile: &Profile, settings: &TestSettings) -> Vec<String> {
    let pct = |t: f64| format!("{:e}%", t * 100.0);
    let mut v = vec![
        format!(
            "set polarity {}",
            if stage.polarity == Polarity::Npn {
                "npn"
            } else {
                "pnp"
            }
        ),
        format!("set vcc {:e} {}", stage.vcc.value, pct(stage.vcc.tol)),
    ];
    for r in Resistor::ALL {
        let p = stage.part(r);
        v.push(format!(
            "set {} {:e} {}",
            r.name().to_lowercase(),
            p.value,
            pct(p.tol)
        ));
    }
    v.push(match stage.rl {
        Some(rl) => format!("set rl {rl:e}"),
        None => "set rl none".into(),
    });
    v.push(format!("set rs {:e}", stage.rs));
    for (name, c) in [("cin", stage.cin), ("cout", stage.cout), ("ce", stage.ce)] {
        v.push(match c {
            Some(p) => format!("set {name} {:e} {}", p.value, pct(p.tol)),
            None => format!("set {name} none"),
        });
    }
    // beta sets min, typ and max; then widen.
    v.push(format!("set beta {:e}", profile.beta_typ));
    v.push(format!("set beta-min {:e}", profile.beta_min));
    v.push(format!("set beta-max {:e}", profile.beta_max));
    v.push(format!("set beta-rev {:e}", profile.beta_rev));
    v.push(format!("set beta-tc {:e}%", profile.beta_tc * 100.0));
    v.push(format!("set is {:e}", profile.is_25));
    v.push(match profile.early {
        Some(e) => format!("set early {e:e}"),
        None => "set early none".into(),
    });
    v.push(format!("set vce-sat {:e}", profile.vce_sat));
    v.push(format!("set power-rating {:e}", profile.power_25));
    v.push(format!("set tj-max {:e}", profile.tj_max));
    // `set temp` collapses the range to one ambient inside it; then widen it.
    let (lo, hi) = (settings.temp_min_c, settings.temp_max_c);
    v.push(format!(
        "set temp {:e}",
        DEFAULT_TEMP_C.clamp(lo.min(hi), hi.max(lo))
    ));
    v.push(format!("set temp-min {lo:e}"));
    v.push(format!("set temp-max {hi:e}"));
    let m = &settings.meter;
    v.push(format!("meter gain {}", pct(m.gain_error)));
    v.push(format!("meter offset {:e}", m.offset));
    v.push(format!("meter divider {}", pct(m.divider_tol)));
    v.push(match settings.inputs.r {
        Some(r) => format!("set input-r {r:e}"),
        None => "set input-r none".into(),
    });
    v.push(format!("set inputs {}", settings.inputs.mode.name()));
    v
}

/// The settings digest the instrument must report after [`push_lines`] (the text forms are
/// parsed by the same engine), and the design hash of its stage and transistor.
pub fn expected(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
) -> Option<(String, u64)> {
    let mut c = local_console();
    let mut sink = Vec::new();
    for l in push_lines(stage, profile, settings) {
        let mut out = embedded_io_adapters::std::FromStd::new(&mut sink);
        c.line(&l, &mut out).ok()?;
    }
    let text = String::from_utf8_lossy(&sink);
    if text.lines().any(|l| l.starts_with("err ")) {
        return None;
    }
    let st = c.settings();
    Some((
        digest(&st.stage, &st.profile, &st.test_settings()).to_string(),
        design_hash(&st.stage, &st.profile),
    ))
}
