//! The human report of the design search: each candidate's part list, figures and warnings.

use super::*;

impl Cmd {
    pub(super) fn report(
        &self,
        req: &Requirement,
        shown: &[&Candidate],
        preds: &[Prediction],
        extras: &[Extra],
    ) -> String {
        let mut s = String::new();
        let load = req
            .rl
            .map_or("no load".to_string(), |r| format!("into {}", eng(r, "Ω")));
        let swing = if req.swing_pp > 0.0 {
            format!("swing >= {}", eng(req.swing_pp, "V"))
        } else {
            "no swing required".to_string()
        };
        let _ = writeln!(
            s,
            "Requirement: gain {} {load} from {}, {} supply, IC <= {}, {swing}, low corner <= {}, {} to {} °C",
            req.gain,
            eng(req.rs, "Ω"),
            eng(req.vcc, "V"),
            eng(req.ic_max, "A"),
            eng(req.f_low_or_default(), "Hz"),
            req.temp_min,
            req.temp_max
        );
        let _ = writeln!(
            s,
            "Held: {} (gain within ±{} %{})",
            match req.hold {
                Hold::WorstCase =>
                    "at every corner of the resistor tolerance, hFE min..max and the ambient range",
                Hold::Nominal => "at the nominal point (worst case shown beside it)",
            },
            fmt_pct(req.gain_tol),
            if req.hold == Hold::WorstCase {
                ", capacitors at their low tolerance for the low corner"
            } else {
                ""
            }
        );
        let _ = writeln!(
            s,
            "Candidates (best first; {} resistors, {} capacitors; nominal | worst case)",
            req.series, req.cap_series
        );
        let x_of = |c: &Candidate| {
            shown
                .iter()
                .position(|x| std::ptr::eq(*x, c))
                .and_then(|i| extras.get(i))
        };
        let mut row = |label: &str, f: &dyn Fn(&Candidate) -> String| {
            let _ = write!(s, "  {label:<22}");
            for c in shown {
                let _ = write!(s, " {:>18}", f(c));
            }
            s.push('\n');
        };
        row("", &|c| {
            format!(
                "#{}",
                shown
                    .iter()
                    .position(|x| std::ptr::eq(*x, c))
                    .map_or(0, |i| i + 1)
            )
        });
        for r in Resistor::ALL {
            row(r.name(), &|c| eng(c.stage.resistor(r), "Ω"));
        }
        let cap =
            |p: Option<biasjig_core::stage::Part>| p.map_or("-".into(), |p| eng(p.value, "F"));
        row("CIN", &|c| cap(c.stage.cin));
        row("COUT", &|c| cap(c.stage.cout));
        row("CE", &|c| cap(c.stage.ce));
        row("gain", &|c| format!("{:.2}", c.gain));
        row("  vs required", &|c| {
            format!("{:+.1} %", c.margins.gain_error * 100.0)
        });
        row("  worst case |gain|", &|c| {
            x_of(c).map_or("-".into(), |x| {
                format!("{:.2}..{:.2}", x.held.gain_min, x.held.gain_max)
            })
        });
        row("  worst vs required", &|c| {
            x_of(c).map_or("-".into(), |x| {
                format!(
                    "{:+.1}..{:+.1} %",
                    (x.held.gain_min / req.gain - 1.0) * 100.0,
                    (x.held.gain_max / req.gain - 1.0) * 100.0
                )
            })
        });
        row("swing p-p", &|c| eng(c.swing_pp, "V"));
        row("  worst case", &|c| {
            x_of(c).map_or("-".into(), |x| eng(x.held.swing_pp_min, "V"))
        });
        if req.swing_pp > 0.0 {
            row("  vs required", &|c| {
                format!("x{:.2}", c.margins.swing_ratio)
            });
        }
        row("IC", &|c| eng(c.op.ic, "A"));
        row("  of budget", &|c| {
            format!("{:.0} %", c.margins.ic_ratio * 100.0)
        });
        row("  worst case", &|c| {
            x_of(c).map_or("-".into(), |x| {
                format!("{}..{}", eng(x.held.ic_min, "A"), eng(x.held.ic_max, "A"))
            })
        });
        row("  worst of budget", &|c| {
            x_of(c).map_or("-".into(), |x| {
                format!("{:.0} %", 100.0 * x.held.ic_max / req.ic_max)
            })
        });
        row("  drift over hFE", &|c| {
            format!("{:.1} %", c.margins.drift_beta * 100.0)
        });
        row("  drift over ambient", &|c| {
            format!("{:.1} %", c.margins.drift_temp * 100.0)
        });
        row("supply current", &|c| eng(c.supply_current, "A"));
        row("low corner (pole sum)", &|c| eng(c.f_low, "Hz"));
        row("  worst case", &|c| {
            x_of(c).map_or("-".into(), |x| eng(x.held.f_low_max, "Hz"))
        });
        row("  of required", &|c| {
            format!("{:.0} %", c.margins.f_low_ratio * 100.0)
        });
        row("transistor power", &|c| eng(c.transistor_power, "W"));
        row("2nd harmonic", &|c| {
            x_of(c).and_then(|x| x.distortion).map_or("-".into(), |d| {
                format!(
                    "{:.1} %{}",
                    100.0 * d.hd2,
                    if d.clips {
                        " CLIPS"
                    } else if d.hd2 > HD2_LIMIT {
                        " HIGH"
                    } else {
                        ""
                    }
                )
            })
        });
        row("  at swing p-p", &|c| {
            x_of(c)
                .and_then(|x| x.distortion)
                .map_or("-".into(), |d| eng(d.swing_pp, "V"))
        });
        row("holds every corner", &|c| {
            x_of(c).map_or("-".into(), |x| match x.held.binding(req) {
                None => "yes".into(),
                Some((k, _, _)) => format!("no: {}", k.name()),
            })
        });
        row("score (lower better)", &|c| format!("{:.2}", c.score));
        let (Some(best), Some(p)) = (shown.first(), preds.first()) else {
            return s;
        };
        let _ = writeln!(s, "\nPart list of #1");
        s.push_str(&part_list(&best.stage, p));
        if let Some(x) = extras.first() {
            if !x.warnings.is_empty() {
                let _ = writeln!(s, "Notes on #1");
                for w in &x.warnings {
                    let _ = writeln!(s, "  - {w}");
                }
            }
            if let Some(d) = x.distortion {
                if d.clips || d.hd2 > HD2_LIMIT {
                    let _ = writeln!(
                        s,
                        "  ! second harmonic {:.1} % at {} peak-to-peak{}: over the {:.0} % flag",
                        100.0 * d.hd2,
                        eng(d.swing_pp, "V"),
                        if d.clips { " (clips at a peak)" } else { "" },
                        100.0 * HD2_LIMIT
                    );
                }
            }
        }
        s.push_str(&text::prediction(&best.stage, p, req.temp));
        s
    }
}

/// The part list a technician picks from bins: value, code, series, tolerance, power rating,
/// colour bands.
fn part_list(stage: &Stage, p: &Prediction) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{}  {:>7}  colour bands", part_heads(), "rating");
    for r in Resistor::ALL {
        let part = stage.part(r);
        let _ = writeln!(
            s,
            "{}  {:>7}  {}",
            part_cells(PartKind::Resistor, r.name(), part),
            eng(rating_for(p.power.resistor(r)), "W"),
            bands(part.value, part.tol)
        );
    }
    // Each capacitor's rating from the DC voltage across it (and its polarity).
    let ratings: Vec<Warning> = warnings(stage, &p.op)
        .into_iter()
        .filter(|w| matches!(w, Warning::CapRating { .. }))
        .collect();
    for (name, c) in [("CIN", stage.cin), ("COUT", stage.cout), ("CE", stage.ce)] {
        if let Some(c) = c {
            let rating = ratings.iter().find_map(|w| match *w {
                Warning::CapRating {
                    cap,
                    rating,
                    positive,
                    ..
                } if cap.name() == name => Some((rating, positive)),
                _ => None,
            });
            let _ = writeln!(
                s,
                "{}  rated >= {}{}",
                part_cells(PartKind::Capacitor, name, c),
                rating.map_or("-".into(), |r| eng(r.0, "V")),
                match rating.and_then(|r| r.1) {
                    Some(_) => "  polarised: see the notes",
                    None => "",
                }
            );
        }
    }
    s
}
