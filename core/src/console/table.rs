//! The one command table: each row names a command (and any other word for it), its usage, its
//! line of help and how its arguments are read. `help` lists it, [`super::parse::parse`] looks
//! the command word up in it, and the help test checks it against docs/protocol.md; the parsed
//! [`Command`] is run by [`super::Console::exec`] in the module of its job.
//!
//! The handler is not a column: handlers are generic over the jig, the store, the clock and the
//! reply's writer, and a `const` table cannot hold generic functions (a type-erased writer would
//! cost every reply a dynamic call). Each row's reader yields one [`Command`] variant instead,
//! and `exec` matches every variant, so a command without a handler does not compile.
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use embedded_io::Write;

use super::args::{self, bare, Read};
use super::parse::{Command, Name, Pin, SET_NAMES};
use super::reply::{Fail, Outcome, Reply};
use super::Code;

/// One console command.
#[derive(Clone, Copy)]
pub struct Spec {
    /// The command's words, separated by spaces: its name first, then any other word for it
    /// (`identify *idn?`). Matched without regard to case.
    pub names: &'static str,
    /// How it is written, as `help` shows it.
    pub usage: &'static str,
    /// What it does, in one line.
    pub help: &'static str,
    /// Reads its arguments.
    read: Reader,
}

/// How a row reads its arguments.
#[derive(Clone, Copy)]
enum Reader {
    /// The command takes none: `USAGE` when any are given.
    Bare(Bare),
    /// This function reads them.
    Args(Read),
    /// `[SAMPLES]`, the command made of them by this constructor.
    Samples(fn(u16) -> Command<'static>),
    /// One PIN.
    Pin(fn(Pin) -> Command<'static>),
    /// One design name.
    Name(fn(Name) -> Command<'static>),
}

/// The commands that take no arguments (a small value in the table, not a function each).
#[derive(Clone, Copy)]
enum Bare {
    /// [`Command::Identify`].
    Identify,
    /// [`Command::Reset`].
    Reset,
    /// [`Command::Stage`].
    Stage,
    /// [`Command::Profile`].
    Profile,
    /// [`Command::Predict`].
    Predict,
    /// [`Command::Hash`].
    Hash,
    /// [`Command::Digest`].
    Digest,
    /// [`Command::Design`].
    Design,
    /// [`Command::Limits`].
    Limits,
    /// [`Command::Diagnose`].
    Diagnose,
    /// [`Command::Readings`].
    Readings,
    /// [`Command::Save`].
    Save,
    /// [`Command::Designs`].
    Designs,
}

impl Bare {
    fn command(self) -> Command<'static> {
        match self {
            Bare::Identify => Command::Identify,
            Bare::Reset => Command::Reset,
            Bare::Stage => Command::Stage,
            Bare::Profile => Command::Profile,
            Bare::Predict => Command::Predict,
            Bare::Hash => Command::Hash,
            Bare::Digest => Command::Digest,
            Bare::Design => Command::Design,
            Bare::Limits => Command::Limits,
            Bare::Diagnose => Command::Diagnose,
            Bare::Readings => Command::Readings,
            Bare::Save => Command::Save,
            Bare::Designs => Command::Designs,
        }
    }
}

impl Spec {
    /// The command's name (its first word).
    pub fn name(&self) -> &'static str {
        self.names.split(' ').next().unwrap_or(self.names)
    }

    /// `word` is one of the command's words (case-insensitive).
    pub fn is(&self, word: &str) -> bool {
        self.names.split(' ').any(|n| n.eq_ignore_ascii_case(word))
    }

    /// Read the arguments of a line whose command word is this command's.
    pub(super) fn read<'s, 'l>(
        &self,
        a: args::Args<'s, 'l>,
    ) -> Result<Command<'l>, super::parse::ParseError<'l>> {
        match self.read {
            Reader::Bare(b) => bare(a, b.command()),
            Reader::Args(read) => read(a),
            Reader::Samples(make) => args::samples(a).map(make),
            Reader::Pin(make) => args::pin(a).map(make),
            Reader::Name(make) => args::name(a).map(make),
        }
    }
}

/// The row of a command word, if there is one.
pub fn find(word: &str) -> Option<&'static Spec> {
    COMMANDS.iter().find(|s| s.is(word))
}

/// Every command, in the order `help` lists them.
pub const COMMANDS: [Spec; 32] = [
    Spec {
        names: "help",
        usage: "help [COMMAND]",
        help: "this list, or one command",
        read: Reader::Args(args::help),
    },
    Spec {
        names: "identify *idn?",
        usage: "identify | *IDN?",
        help: "maker,model,serial,firmware",
        read: Reader::Bare(Bare::Identify),
    },
    Spec {
        names: "*rst",
        usage: "*RST",
        help: "stage, transistor, meter, readings back to the defaults",
        read: Reader::Bare(Bare::Reset),
    },
    Spec {
        names: "stage",
        usage: "stage",
        help: "show the stage",
        read: Reader::Bare(Bare::Stage),
    },
    Spec {
        names: "set",
        usage: "set NAME VALUE [TOL%]",
        help: "change one part or figure (help set)",
        read: Reader::Args(args::set),
    },
    Spec {
        names: "profile",
        usage: "profile",
        help: "show the transistor",
        read: Reader::Bare(Bare::Profile),
    },
    Spec {
        names: "parts",
        usage: "parts [4|5]",
        help: "part values, codes and colour bands",
        read: Reader::Args(args::parts),
    },
    Spec {
        names: "predict",
        usage: "predict",
        help: "operating point, estimate, gain, corner, power",
        read: Reader::Bare(Bare::Predict),
    },
    Spec {
        names: "hash",
        usage: "hash",
        help: "design hash of the stage and transistor",
        read: Reader::Bare(Bare::Hash),
    },
    Spec {
        names: "digest",
        usage: "digest",
        help: "settings digest: stage, transistor, test ambient, meter and inputs",
        read: Reader::Bare(Bare::Digest),
    },
    Spec {
        names: "requirement",
        usage: "requirement [NAME VALUE]",
        help: "show or set the requirement",
        read: Reader::Args(args::requirement),
    },
    Spec {
        names: "design",
        usage: "design",
        help: "candidate part lists for the requirement",
        read: Reader::Bare(Bare::Design),
    },
    Spec {
        names: "pick",
        usage: "pick N",
        help: "take candidate N as the stage",
        read: Reader::Args(args::pick),
    },
    Spec {
        names: "spread",
        usage: "spread [RUNS] [SEED]",
        help: "worst case and Monte Carlo spread (runs 1..2000)",
        read: Reader::Args(args::spread),
    },
    Spec {
        names: "limits",
        usage: "limits",
        help: "pass windows per node at the nominal supply",
        read: Reader::Bare(Bare::Limits),
    },
    Spec {
        names: "meter",
        usage: "meter [gain P% | offset V | divider P%]",
        help: "meter and jig accuracy",
        read: Reader::Args(args::meter),
    },
    Spec {
        names: "measure",
        usage: "measure [SAMPLES]",
        help: "read the nodes with the jig (1..1024 averaged)",
        read: Reader::Samples(Command::Measure),
    },
    Spec {
        names: "check",
        usage: "check VCC VB VE VC",
        help: "judge typed readings; the likely fault when it fails",
        read: Reader::Args(args::check),
    },
    Spec {
        names: "test",
        usage: "test [SAMPLES]",
        help: "measure, then check",
        read: Reader::Samples(Command::Test),
    },
    Spec {
        names: "diagnose",
        usage: "diagnose",
        help: "likely faults of the last board, again",
        read: Reader::Bare(Bare::Diagnose),
    },
    Spec {
        names: "readings",
        usage: "readings",
        help: "show the last readings",
        read: Reader::Bare(Bare::Readings),
    },
    Spec {
        names: "calibrate",
        usage: "calibrate [CH low V | CH high V | gain F KNOWN | reset]",
        help: "jig calibration: two points per channel, the signal path against a known gain",
        read: Reader::Args(args::calibrate),
    },
    Spec {
        names: "inject",
        usage: "inject PART MODE | none (PART also cin cout ce)",
        help: "emulated jig: make the board faulty",
        read: Reader::Args(args::inject),
    },
    Spec {
        names: "lock",
        usage: "lock PIN",
        help: "lock editing of the stage and limits",
        read: Reader::Pin(Command::Lock),
    },
    Spec {
        names: "unlock",
        usage: "unlock PIN",
        help: "unlock editing",
        read: Reader::Pin(Command::Unlock),
    },
    Spec {
        names: "echo",
        usage: "echo on|off",
        help: "echo typed characters (for terminals)",
        read: Reader::Args(args::echo),
    },
    Spec {
        names: "mode",
        usage: "mode [machine|human]",
        help: "key=value data lines in SI units, or text",
        read: Reader::Args(args::mode),
    },
    Spec {
        names: "save",
        usage: "save",
        help: "keep the settings and calibration",
        read: Reader::Bare(Bare::Save),
    },
    Spec {
        names: "keep",
        usage: "keep NAME",
        help: "keep the stage and settings on the unit as NAME",
        read: Reader::Name(Command::Keep),
    },
    Spec {
        names: "designs",
        usage: "designs",
        help: "list the designs kept on the unit",
        read: Reader::Bare(Bare::Designs),
    },
    Spec {
        names: "choose",
        usage: "choose NAME",
        help: "a kept design becomes the stage (also at power-up)",
        read: Reader::Name(Command::Choose),
    },
    Spec {
        names: "forget",
        usage: "forget NAME",
        help: "remove a kept design",
        read: Reader::Name(Command::Forget),
    },
];

/// The safety cautions shown by `help`.
pub const SAFETY: [&str; 4] = [
    "Safety: de-energise the board before changing probes or parts.",
    "Keep jig inputs within their rated range.",
    "No mains-connected circuits without isolation.",
    "Local codes and licensed practice take precedence.",
];

/// `help [COMMAND]`: the table with the safety cautions, one row, or the names of `set`.
#[inline(never)]
pub(super) fn help<W: Write>(topic: Option<&str>, r: &mut Reply<'_, W>) -> Outcome {
    match topic {
        None => {
            r.data(format_args!("Commands (words are case-insensitive):"));
            for s in &COMMANDS {
                r.data(format_args!("{:<40} {}", s.usage, s.help));
            }
            for s in SAFETY {
                r.data(format_args!("{s}"));
            }
            Ok(None)
        }
        Some(t) if t.eq_ignore_ascii_case("set") => {
            r.data(format_args!("set NAME VALUE [TOL%]; NAME one of:"));
            r.data(format_args!("{SET_NAMES}"));
            r.data(format_args!(
                "rl, cin, cout, ce, early take `none`; beta sets min, typ and max"
            ));
            Ok(None)
        }
        Some(t) => match find(t) {
            Some(s) => {
                r.data(format_args!("{:<40} {}", s.usage, s.help));
                Ok(None)
            }
            None => Err(Fail::new(
                Code::Unknown,
                format_args!("help: {t}: no such command"),
            )),
        },
    }
}
