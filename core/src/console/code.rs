//! The code words of `err` status lines.

/// The code word of an `err` status line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Code {
    /// No such command.
    Unknown,
    /// Wrong number or shape of arguments.
    Usage,
    /// An argument is not an allowed value.
    Value,
    /// The values are each valid but the stage or profile they make is not.
    Range,
    /// The input line was longer than the buffer.
    TooLong,
    /// The input line held a control byte.
    Control,
    /// The input line was not UTF-8.
    Encoding,
    /// Refused: the unit is locked.
    Locked,
    /// Wrong PIN.
    Pin,
    /// Too many wrong PINs: wait before the next try.
    Wait,
    /// This unit's jig cannot do that.
    NotSupported,
    /// The jig failed.
    Jig,
    /// The operating point could not be found.
    Solve,
    /// The store failed.
    Store,
    /// No readings yet: measure or check first.
    NoReadings,
    /// Readings that cannot come from a powered, correctly probed board: refused, not judged.
    Implausible,
    /// No design: the requirement cannot be met, or `pick` before `design`.
    NoDesign,
}

impl Code {
    /// The code word as sent: `UNKNOWN`, `USAGE`, ...
    pub fn name(self) -> &'static str {
        match self {
            Self::Unknown => "UNKNOWN",
            Self::Usage => "USAGE",
            Self::Value => "VALUE",
            Self::Range => "RANGE",
            Self::TooLong => "TOO_LONG",
            Self::Control => "CONTROL",
            Self::Encoding => "ENCODING",
            Self::Locked => "LOCKED",
            Self::Pin => "PIN",
            Self::Wait => "WAIT",
            Self::NotSupported => "NOT_SUPPORTED",
            Self::Jig => "JIG",
            Self::Solve => "SOLVE",
            Self::Store => "STORE",
            Self::NoReadings => "NO_READINGS",
            Self::Implausible => "IMPLAUSIBLE",
            Self::NoDesign => "NO_DESIGN",
        }
    }

    /// Every code, for the protocol document and tests.
    pub const ALL: [Code; 17] = [
        Self::Unknown,
        Self::Usage,
        Self::Value,
        Self::Range,
        Self::TooLong,
        Self::Control,
        Self::Encoding,
        Self::Locked,
        Self::Pin,
        Self::Wait,
        Self::NotSupported,
        Self::Jig,
        Self::Solve,
        Self::Store,
        Self::NoReadings,
        Self::Implausible,
        Self::NoDesign,
    ];
}

impl core::fmt::Display for Code {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(self.name())
    }
}
