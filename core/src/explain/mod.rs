//! Faults in plain words for the technician, and for faults that share their readings the
//! cheapest way to tell them apart with the board in circuit: one wording for the command line,
//! the station and the instrument's console.
//!
//! A group is named on its first line together with the separating action; the lines under it
//! say what each result of that action means. The actions rest on two facts of in-circuit
//! measurement (common practice): parallel paths through other parts can only lower an ohmmeter
//! reading, never raise it, and a transistor junction in such a path conducts one way only, so
//! the reading is taken with the meter leads both ways round and the higher one counts. Hence a
//! part suspected low or shorted is cleared when it reads its value, and a part suspected high or
//! open is convicted when it reads above its band. The one parallel part that is not blocked by
//! a junction is CE across RE2: a shorted CE makes RE2 read about 0 Ω in circuit, and a shorted
//! (or leaky) CE gives the same DC readings as a shorted (or low) RE2, so CE is named with those
//! faults and lifted before RE2 is measured.
//!
//! The files by job: `words` a fault in words, `group` the groups and their separating
//! measurements, `outcome` those measurements and their results in words, `listing` the
//! technician's listing and the machine names.

mod group;
mod listing;
mod outcome;
mod words;

pub use group::{Group, Member};
pub use listing::{listing, suspect_of, Listed, IN_CIRCUIT};
pub use outcome::{Action, Outcome};
pub use words::FaultWords;

/// Faults named in one group at most (further members are left out of the words, never out of
/// the diagnosis).
pub const GROUP_MAX: usize = 12;

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnose::{ResistorMode, Suspect};
    use crate::stage::{Capacitor, DeviceFault, Resistor};
    use std::string::{String, ToString};
    use std::vec::Vec as StdVec;

    fn r(p: Resistor, m: ResistorMode) -> Suspect {
        Suspect::Resistor(p, m)
    }

    /// A listed fault with the faults of the same readings `same`, no fitted value.
    fn listed(suspect: Suspect, score: f64, same: &[Suspect], tone: Option<f64>) -> Listed {
        Listed {
            suspect,
            estimate: None,
            score,
            same: same.iter().copied().collect(),
            tone,
        }
    }

    fn lines(items: &[Listed]) -> StdVec<String> {
        let mut v = StdVec::new();
        let stage = crate::console::default_stage();
        listing(&stage, true, items, &mut |a| v.push(a.to_string()));
        v
    }

    /// A shorted RE2 names CE and says to lift it: as a group with its separating action, and
    /// in the budget instrument's listing (without the fault detail) in the fault's own words.
    #[test]
    fn a_shorted_re2_names_ce_and_lifts_it() {
        let l = lines(&[listed(
            r(Resistor::Re2, ResistorMode::Short),
            0.9,
            &[],
            None,
        )]);
        if cfg!(feature = "fault-detail") {
            assert!(l[1].starts_with("1. RE2 shorted or CE shorted: same readings (90 %); "));
            assert!(l[1].contains("lift one end of CE and measure RE2"), "{l:?}");
            assert!(l[2].contains("CE shorted") && l[2].contains("still below: RE2 shorted"));
        } else {
            assert!(l[1].starts_with("1. RE2 shorted"), "{l:?}");
            assert!(
                l[1].contains("CE shorted or leaky") && l[1].contains("lift one end of CE"),
                "{l:?}"
            );
        }
    }

    /// A real CE short (signal test) stands in for the implied one: named once, settled by
    /// lifting CE; coupling capacitors get their own capacitance step, and the separating tone
    /// is said under the group.
    #[test]
    #[cfg(feature = "fault-detail")]
    fn capacitor_members_have_their_own_step() {
        let ce = Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short);
        let g = Group::of([r(Resistor::Re2, ResistorMode::Short), ce]);
        assert_eq!(g.members().len(), 2, "{:?}", g.members());
        assert!(!g.members().contains(&Member::CeShorted));
        assert_eq!(g.to_string(), "RE2 shorted or CE shorted");
        let s = crate::console::default_stage();
        let o: StdVec<String> = g.outcomes(&s).map(|o| o.to_string()).collect();
        assert_eq!(o.len(), 1, "{o:?}");
        assert!(
            o[0].contains("with CE lifted: CE shorted; still below: RE2 shorted"),
            "{o:?}"
        );

        let l = lines(&[listed(
            Suspect::Capacitor(Capacitor::Cin, ResistorMode::Open),
            0.6,
            &[Suspect::Capacitor(Capacitor::Cin, ResistorMode::Low)],
            Some(20.0),
        )]);
        assert!(
            l[1].starts_with("1. CIN open or CIN too small: same readings (60 %); power off, lift one end of CIN and measure its capacitance"),
            "{l:?}"
        );
        assert!(
            l[2].contains("CIN reads next to nothing: CIN open"),
            "{l:?}"
        );
        assert!(l[2].contains("CIN too small"), "{l:?}");
        assert!(
            l[3].contains("a gain reading at 20 Hz tells them apart"),
            "{l:?}"
        );
    }

    #[test]
    fn machine_names_parse_back() {
        for s in [
            r(Resistor::Re1, ResistorMode::High),
            Suspect::Device(DeviceFault::CeShort),
            Suspect::Capacitor(Capacitor::Cin, ResistorMode::Open),
            Suspect::Capacitor(Capacitor::Cout, ResistorMode::Low),
            Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short),
        ] {
            assert_eq!(suspect_of(s.part(), s.mode()), Some(s));
        }
        assert_eq!(suspect_of("RX", "open"), None);
    }
}
