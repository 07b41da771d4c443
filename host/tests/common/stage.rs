//! Invented stages of our own, each written once as the flags a user types; the same stage and
//! transistor for the engine are read from those flags (the core's value parser), so the
//! readings a test makes and the stage it hands `biasjig` cannot drift apart.

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::solve::{solve, Conditions, OperatingPoint};
use biasjig_core::stage::{Fault, Part, Polarity, Stage};
use biasjig_core::units::parse_value;

/// A stage as the flags a user types, one line: flag/value pairs (`--pnp` stands alone).
#[derive(Debug, Clone, Copy)]
pub struct Flags(pub &'static str);

/// Design A of the check and store tests (15 V, 68k/15k divider, 3k9 collector, 220 + 820
/// emitter, hFE 120/210/360, VBE 0.66 V).
pub const DESIGN_A: Flags = Flags(concat!(
    "--vcc 15 --r1 68k --r2 15k --rc 3k9 --re1 220 --re2 820 ",
    "--beta-min 120 --beta 210 --beta-max 360 --vbe 0.66",
));

/// Design B: design A with a 4k7 collector resistor (another design hash).
pub const DESIGN_B: Flags = Flags(concat!(
    "--vcc 15 --r1 68k --r2 15k --rc 4k7 --re1 220 --re2 820 ",
    "--beta-min 120 --beta 210 --beta-max 360 --vbe 0.66",
));

/// The signal-test stage (12 V, 47k/10k divider, 4k7 collector, 220 + 820 emitter, 15k load,
/// 600 Ω source, 10 µ/10 µ/470 µ, hFE 100/200/300).
pub const SIGNAL: Flags = Flags(concat!(
    "--vcc 12 --r1 47k --r2 10k --rc 4k7 --re1 220 --re2 820 --rl 15k --rs 600 ",
    "--cin 10u --cout 10u --ce 470u --beta-min 100 --beta 200 --beta-max 300",
));

/// A high-impedance stage (24 V, R1 470 k, R2 100 k, RC 47 k, RE 10 k + 0, hFE from 100).
pub const HIGH_Z: Flags =
    Flags("--vcc 24 --r1 470k --r2 100k --rc 47k --re1 10k --re2 0 --beta-min 100");

/// Capacitors are taken at ±20 % (the tool's default for them).
const CAP_TOL: f64 = 0.2;

impl Flags {
    /// Flags made at run time (a drawn stage); the text lives as long as the test.
    pub fn owned(text: String) -> Self {
        Self(text.leak())
    }

    /// The flags, one argument each.
    pub fn words(self) -> std::str::SplitWhitespace<'static> {
        self.0.split_whitespace()
    }

    /// The flags as owned arguments.
    pub fn args(self) -> Vec<String> {
        self.words().map(String::from).collect()
    }

    /// The flags without `--vcc` and its value (a command that takes the measured supply).
    pub fn without_vcc(self) -> Vec<String> {
        let mut out = Vec::new();
        let mut it = self.words();
        while let Some(f) = it.next() {
            if f == "--vcc" {
                it.next();
            } else {
                out.push(f.to_string());
            }
        }
        out
    }

    /// The value typed after `flag`, if the flag is there.
    pub fn text(self, flag: &str) -> Option<&'static str> {
        let mut it = self.words();
        it.find(|f| *f == flag)?;
        it.next()
    }

    /// The value after `flag` read as `biasjig` reads it (Ω, F, V or plain).
    pub fn value(self, flag: &str) -> Option<f64> {
        self.text(flag)
            .map(|t| parse_value(t).unwrap_or_else(|e| panic!("{flag} {t}: {e:?}")))
    }

    fn part(self, flag: &str, tol: f64) -> Part {
        Part::new(self.value(flag).unwrap_or(0.0), tol)
    }

    /// A tolerance flag in percent as a fraction, 5 % when it is not given.
    fn tol(self, flag: &str) -> f64 {
        self.value(flag).map_or(0.05, |t| t / 100.0)
    }

    /// The stage the flags give (`--tol` and `--vcc-tol` as given, or 5 %).
    pub fn stage(self) -> Stage {
        let tol = self.tol("--tol");
        let r = |f| self.part(f, tol);
        let cap = |f| self.value(f).map(|v| Part::new(v, CAP_TOL));
        Stage {
            polarity: if self.words().any(|f| f == "--pnp") {
                Polarity::Pnp
            } else {
                Polarity::Npn
            },
            vcc: self.part("--vcc", self.tol("--vcc-tol")),
            r1: r("--r1"),
            r2: r("--r2"),
            rc: r("--rc"),
            re1: r("--re1"),
            re2: r("--re2"),
            rl: self.value("--rl"),
            rs: self.value("--rs").unwrap_or(0.0),
            cin: cap("--cin"),
            cout: cap("--cout"),
            ce: cap("--ce"),
        }
    }

    /// The transistor the flags give: the core's default profile with the hFE and VBE flags.
    pub fn profile(self) -> Profile {
        let d = Profile::default();
        Profile {
            beta_min: self.value("--beta-min").unwrap_or(d.beta_min),
            beta_typ: self.value("--beta").unwrap_or(d.beta_typ),
            beta_max: self.value("--beta-max").unwrap_or(d.beta_max),
            is_25: self.value("--vbe").map_or(d.is_25, is_from_vbe),
            ..d
        }
    }
}

/// The board of `stage` with `fault`: a part fault is built into the stage, a transistor fault
/// goes to the conditions.
pub fn with_fault(stage: &Stage, cond: Conditions, fault: Option<Fault>) -> (Stage, Conditions) {
    match fault {
        Some(Fault::Device(d)) => (
            *stage,
            Conditions {
                fault: Some(d),
                ..cond
            },
        ),
        Some(f) => (stage.with_fault(f), cond),
        None => (*stage, cond),
    }
}

/// The operating point of `stage` with `fault`, by the engine's exact solve.
pub fn solve_with(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
    fault: Option<Fault>,
) -> OperatingPoint {
    let (board, cond) = with_fault(stage, cond, fault);
    solve(&board, profile, cond).expect("the engine solves the board")
}

/// The readings (VCC, VB, VE, VC) of a board of the stage `flags` at supply `vcc`, with
/// `fault`, its transistor's hFE `beta_25` at 25 °C.
pub fn readings(flags: Flags, vcc: f64, beta_25: f64, fault: Option<Fault>) -> [f64; 4] {
    let mut s = flags.stage();
    s.vcc.value = vcc;
    let p = flags.profile();
    let cond = Conditions {
        beta_25,
        ..Conditions::typical(&p)
    };
    let op = solve_with(&s, &p, cond, fault);
    [vcc, op.vb, op.ve, op.vc]
}

/// `--vcc V --vb V --ve V --vc V` of readings (shortest decimals that read back exactly).
pub fn reading_flags(r: [f64; 4]) -> Vec<String> {
    ["--vcc", "--vb", "--ve", "--vc"]
        .iter()
        .zip(r)
        .flat_map(|(f, v)| [(*f).to_string(), v.to_string()])
        .collect()
}
