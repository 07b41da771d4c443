//! Human-readable report pieces shared by the commands.

use std::fmt::Write as _;

use biasjig_core::predict::{Prediction, Warnings};
use biasjig_core::series::{colour_bands, BandCount};
use biasjig_core::stage::{Part, Polarity, Resistor, Stage};
use biasjig_core::units::{capacitor_code, resistor_code, Eng};

/// A value with an SI prefix and unit, 3 significant digits.
pub fn eng(value: f64, unit: &'static str) -> String {
    format!("{}", Eng { value, unit })
}

/// A value with 4 significant digits.
pub fn eng4(value: f64, unit: &'static str) -> String {
    format!("{:.4}", Eng { value, unit })
}

/// Colour bands of a resistor as words, 4 bands for 5 % and wider, else 5 bands.
pub fn bands(ohms: f64, tol: f64) -> String {
    let count = if tol >= 0.05 - 1e-9 {
        BandCount::Four
    } else {
        BandCount::Five
    };
    match colour_bands(ohms, tol, count) {
        Ok(b) => b.iter().map(|c| c.name()).collect::<Vec<_>>().join("-"),
        Err(_) => "-".to_string(),
    }
}

/// The heads of a part list's first columns: part, value, code, tolerance (no line end).
pub fn part_heads() -> String {
    format!(
        "  {:<5} {:>10}  {:<6} {:>5}",
        "part", "value", "code", "tol"
    )
}

/// What a part in a part list is, for its value's unit and code.
#[derive(Debug, Clone, Copy)]
pub enum PartKind {
    /// Ohms, the resistor code (`4k7`).
    Resistor,
    /// Farads, the capacitor code (`10u`).
    Capacitor,
}

/// A part's first columns in a part list: designator, value, code, tolerance (no line end).
pub fn part_cells(kind: PartKind, name: &str, p: Part) -> String {
    let (value, code) = match kind {
        PartKind::Resistor => (eng(p.value, "Ω"), resistor_code(p.value)),
        PartKind::Capacitor => (eng(p.value, "F"), capacitor_code(p.value)),
    };
    format!(
        "  {name:<5} {value:>10}  {:<6} {:>4}%",
        code.as_str(),
        fmt_pct(p.tol)
    )
}

/// The part list: designator, value, code, tolerance, colour bands.
pub fn parts(stage: &Stage) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{}  colour bands", part_heads());
    for r in Resistor::ALL {
        let p = stage.part(r);
        if p.value == 0.0 && matches!(r, Resistor::Re1 | Resistor::Re2) {
            let _ = writeln!(s, "  {:<5} {:>10}", r.name(), "none");
            continue;
        }
        let _ = writeln!(
            s,
            "{}  {}",
            part_cells(PartKind::Resistor, r.name(), p),
            bands(p.value, p.tol)
        );
    }
    for (name, c) in [("CIN", stage.cin), ("COUT", stage.cout), ("CE", stage.ce)] {
        match c {
            Some(c) => {
                let _ = writeln!(s, "{}", part_cells(PartKind::Capacitor, name, c));
            }
            None => {
                let _ = writeln!(s, "  {:<5} {:>10}", name, "ideal");
            }
        }
    }
    let rl = stage.rl.map_or("open".to_string(), |r| eng(r, "Ω"));
    let _ = writeln!(s, "  {:<5} {:>10}  (load)", "RL", rl);
    let _ = writeln!(s, "  {:<5} {:>10}  (source)", "RS", eng(stage.rs, "Ω"));
    s
}

/// A tolerance fraction as a short percent figure.
pub fn fmt_pct(tol: f64) -> String {
    let p = tol * 100.0;
    if (p - p.round()).abs() < 1e-9 {
        format!("{p:.0}")
    } else {
        format!("{p}")
    }
}

/// The analysis report: Q-point beside the hand estimate, signal figures, power, warnings.
pub fn prediction(stage: &Stage, p: &Prediction, temp_c: f64) -> String {
    let op = &p.op;
    let e = &p.estimate;
    let mut s = String::new();
    let kind = match stage.polarity {
        Polarity::Npn => "NPN",
        Polarity::Pnp => "PNP",
    };
    let _ = writeln!(
        s,
        "Q-point ({kind}, {} supply, {temp_c} °C, hFE {:.0}): {}",
        eng(op.vcc, "V"),
        op.beta,
        op.region.name()
    );
    let _ = writeln!(s, "  {:<5} {:>11} {:>11}", "", "exact", "hand");
    let rows = [
        ("VB", op.vb, e.vb, "V"),
        ("VE", op.ve, e.ve, "V"),
        ("VC", op.vc, e.vc, "V"),
        ("VCE", op.vce, e.vce, "V"),
        ("IC", op.ic, e.ic, "A"),
    ];
    for (name, x, h, unit) in rows {
        let _ = writeln!(
            s,
            "  {:<5} {:>11} {:>11}",
            name,
            eng4(x, unit),
            eng4(h, unit)
        );
    }
    let _ = writeln!(
        s,
        "  VBE {}, IB {}, IE {}",
        eng4(op.vbe, "V"),
        eng(op.ib, "A"),
        eng4(op.ie, "A")
    );
    let _ = writeln!(s, "Signal (midband)");
    match &p.midband {
        Some(m) => {
            let _ = writeln!(
                s,
                "  gain {:.2} from source, {:.2} from base; Zin {}, Zout {}",
                m.gain,
                m.gain_stage,
                eng(m.zin, "Ω"),
                eng(m.zout, "Ω")
            );
            let _ = writeln!(
                s,
                "  swing {} peak-to-peak at the load; {} clips first",
                eng(m.swing_pp, "V"),
                m.clips.name()
            );
            let _ = writeln!(s, "  gm {}, rπ {}", eng(m.gm, "S"), eng(m.rpi, "Ω"));
        }
        None => {
            let _ = writeln!(s, "  no small-signal path");
        }
    }
    let pole = |f: Option<f64>| f.map_or("-".to_string(), |f| eng(f, "Hz"));
    match p.low.f_low {
        Some(f) => {
            let _ = writeln!(
                s,
                "  low corner {} (-3 dB); poles: CIN {}, COUT {}, CE {}; sum {}",
                eng(f, "Hz"),
                pole(p.low.f_cin),
                pole(p.low.f_cout),
                pole(p.low.f_ce),
                pole(p.low.f_estimate)
            );
        }
        None => {
            let _ = writeln!(s, "  low corner: none (ideal capacitors)");
        }
    }
    let _ = writeln!(s, "Power");
    let _ = writeln!(
        s,
        "  transistor {} of {} allowed at {temp_c} °C; supply current {}",
        eng(p.power.transistor, "W"),
        eng(p.power.rating, "W"),
        eng(p.power.supply_current, "A")
    );
    let hottest = Resistor::ALL
        .iter()
        .map(|r| (r.name(), p.power.resistor(*r)))
        .fold(("", 0.0), |a, b| if b.1 > a.1 { b } else { a });
    let _ = writeln!(
        s,
        "  hottest resistor {} at {}",
        hottest.0,
        eng(hottest.1, "W")
    );
    s.push_str(&warnings(stage, p));
    s
}

/// Warnings in words, one per line (empty when there are none).
pub fn warnings(stage: &Stage, p: &Prediction) -> String {
    let w: &Warnings = &p.warnings;
    let mut s = String::new();
    if !w.any() {
        return s;
    }
    let _ = writeln!(s, "Warnings");
    if w.divider_not_stiff {
        let rth = stage.r1.value * stage.r2.value / (stage.r1.value + stage.r2.value);
        let _ = writeln!(
            s,
            "  divider not stiff: R1‖R2 = {} is more than 0.1·hFE(min)·RE; the bias moves with hFE",
            eng(rth, "Ω")
        );
    }
    if w.saturated {
        let _ = writeln!(s, "  saturated: the stage cannot amplify at this bias");
    }
    if w.cut_off {
        let _ = writeln!(s, "  cut off: no collector current");
    }
    if w.over_rating {
        let _ = writeln!(s, "  transistor over its derated power rating");
    }
    for (hot, r) in w.resistor_hot.iter().zip(Resistor::ALL) {
        if *hot {
            let _ = writeln!(
                s,
                "  {} dissipates more than 0.25 W: use a larger part",
                r.name()
            );
        }
    }
    if w.no_emitter_resistor {
        let _ = writeln!(
            s,
            "  no emitter resistor: the bias depends directly on hFE and VBE"
        );
    }
    if w.q_point_off_centre {
        let _ = writeln!(s, "  VCE within 1 V of a rail: little room for the signal");
    }
    s
}

/// An ambient range in words: "25 °C" for a single temperature, else "-10 to 55 °C".
pub fn ambient(min_c: f64, max_c: f64) -> String {
    if min_c == max_c {
        format!("{min_c} °C")
    } else {
        format!("{min_c} to {max_c} °C")
    }
}
