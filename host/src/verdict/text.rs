//! An outcome in words for a person: the verdict large, the windows, the derived figures and
//! the likely faults.

use biasjig_core::explain::{listing, Listed};
use biasjig_core::settings::TestSettings;
use biasjig_core::stage::Readings;

use super::{listed, separating_tone, Outcome, Station};
use crate::text;

// the letters.)
const BIG_PASS: &str = concat!(
    "  ####    ###    ####   ####\n",
    "  #   #  #   #  #      #\n",
    "  ####   #####   ###    ###\n",
    "  #      #   #      #      #\n",
    "  #      #   #  ####   ####"
);

const BIG_FAIL: &str = concat!(
    "  #####   ###   #####  #\n",
    "  #      #   #    #    #\n",
    "  ####   #####    #    #\n",
    "  #      #   #    #    #\n",
    "  #      #   #  #####  #####"
);

/// One line of the test settings for a person: ambient, meter, inputs.
pub fn settings_text(t: &TestSettings) -> String {
    let inputs = match t.inputs.r {
        Some(r) => format!(
            "inputs {} to ground, {}",
            text::eng(r, "Ω"),
            t.inputs.mode.name()
        ),
        None => "an ideal meter (no inputs modelled)".to_string(),
    };
    format!(
        "ambient {}, meter {} % of reading + {} (divider {} %), {inputs}",
        text::ambient(t.temp_min_c, t.temp_max_c),
        100.0 * t.meter.gain_error,
        text::eng4(t.meter.offset, "V"),
        100.0 * t.meter.divider_tol
    )
}

/// The human report of a checked board. `supply_judged` is false when no nominal supply was
/// given for a stage by flags (its window is then centred on the measured supply itself).
pub fn outcome_text(
    st: &Station,
    serial: Option<&str>,
    r: &Readings,
    o: &Outcome,
    supply_judged: bool,
) -> String {
    let mut out = String::new();
    let design = if st.file_digest.is_some() {
        format!("design {}", st.id)
    } else {
        "stage given by flags".to_string()
    };
    let head = match serial {
        Some(s) => format!("board {s} · {design}"),
        None => design,
    };
    match o {
        Outcome::Refused(why) => {
            out.push_str(&format!("NOT JUDGED ({head})\n{why}\n"));
        }
        Outcome::Judged(j) => {
            let v = &j.verdict;
            out.push_str(if v.pass { BIG_PASS } else { BIG_FAIL });
            out.push_str(&format!("\n\n{head}\n{}\n", settings_text(&st.settings)));
            let sw = &j.windows.supply;
            if supply_judged {
                out.push_str(&format!(
                    "  {:<4} {:>10}   window {} .. {}\n",
                    "VCC",
                    text::eng4(r.vcc, "V"),
                    text::eng4(sw.low, "V"),
                    text::eng4(sw.high, "V")
                ));
            } else {
                out.push_str(&format!(
                    "  {:<4} {:>10}   not judged: no nominal supply given (--vcc-nominal V)\n",
                    "VCC",
                    text::eng4(r.vcc, "V"),
                ));
            }
            for n in &v.nodes {
                let u = n.node.unit();
                out.push_str(&format!(
                    "  {:<4} {:>10}   window {} .. {}{}\n",
                    n.node.label(),
                    text::eng4(n.measured, u),
                    text::eng4(n.low, u),
                    text::eng4(n.high, u),
                    if n.ok { "" } else { "   OUT" }
                ));
            }
            for t in &j.tones {
                out.push_str(&format!(
                    "  gain at {}: {:.3}   window {:.3} .. {:.3}{}\n",
                    text::eng4(t.reading.f, "Hz"),
                    t.reading.gain,
                    t.window.low,
                    t.window.high,
                    if t.ok { "" } else { "   OUT" }
                ));
            }
            let dv = &v.derived;
            let beta = dv
                .beta
                .map_or("not derived".to_string(), |b| format!("{b:.0}"));
            out.push_str(&format!(
                "IC {}, IB {}, hFE {beta}, VBE {}, VCE {}, {}\n",
                text::eng(dv.ic, "A"),
                text::eng(dv.ib, "A"),
                text::eng(dv.vbe, "V"),
                text::eng(dv.vce, "V"),
                dv.region.name()
            ));
            if let Some(d) = &j.diagnosis {
                let items: Vec<Listed> = listed(d)
                    .into_iter()
                    .map(|h| Listed::of(d, h).with_tone(separating_tone(st, r.vcc, d, h)))
                    .collect();
                listing(&st.stage, d.explained, &items, &mut |a| {
                    let l = a.to_string();
                    let indent = if l.starts_with("Likely") || l.starts_with("No single") {
                        ""
                    } else {
                        "  "
                    };
                    out.push_str(&format!("{indent}{l}\n"));
                });
            }
        }
    }
    out
}
