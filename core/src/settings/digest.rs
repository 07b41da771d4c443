//! The settings digest ([`digest`]) and the canonical encoding it hashes ([`Encode`],
//! [`Canonical`]).
//!
//! **Settings digest** ([`digest`]): SHA-256 (FIPS 180-4) over the canonical encoding of the
//! stage, the profile and the test settings: the ASCII tag `biasjig-settings`, a version byte,
//! then numbers as IEEE 754 binary64 little-endian (−0 written as +0), an absent optional value
//! as the byte 0 and a present one as 1 and its bytes; in order: polarity (0 NPN, 1 PNP); VCC
//! value, tolerance; R1, R2, RC, RE1, RE2 value, tolerance each; RL optional; RS; CIN, COUT, CE
//! optional value and tolerance each; hFE min, typ, max, reverse, tc; IS; Early optional;
//! VCE(sat); power rating; maximum junction temperature; test ambient min, max; meter gain
//! error, offset, divider tolerance; input resistance optional; inputs mode (0 together, 1 one).
//! Printed as 64 lower-case hex digits. Any change of anything the verdict depends on changes
//! it; the instrument computes the same digest from the same values.

use sha2::{Digest as _, Sha256};

use super::{InputMode, TestSettings};
use crate::device::Profile;
use crate::stage::{Part, Polarity, Stage};

/// A SHA-256 digest, 32 bytes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Digest(pub [u8; 32]);

impl core::fmt::Display for Digest {
    /// 64 lower-case hex digits.
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        for b in self.0 {
            write!(f, "{b:02x}")?;
        }
        Ok(())
    }
}

impl Digest {
    /// From 64 hex digits (either case); `None` for anything else.
    pub fn parse(text: &str) -> Option<Digest> {
        let b = text.as_bytes();
        if b.len() != 64 {
            return None;
        }
        let nibble = |c: u8| match c {
            b'0'..=b'9' => Some(c - b'0'),
            b'a'..=b'f' => Some(c - b'a' + 10),
            b'A'..=b'F' => Some(c - b'A' + 10),
            _ => None,
        };
        let mut out = [0u8; 32];
        for (o, pair) in out.iter_mut().zip(b.chunks_exact(2)) {
            let (hi, lo) = match pair {
                [h, l] => (nibble(*h)?, nibble(*l)?),
                _ => return None,
            };
            *o = hi << 4 | lo;
        }
        Some(Digest(out))
    }
}

/// A canonical byte encoding (see the module notes): numbers as IEEE 754 binary64
/// little-endian, an absent optional value as the byte 0 and a present one as 1 and its bytes.
/// The settings digest ([`Canonical`]) writes through it; so can any other record of a design.
pub trait Encode {
    /// Raw bytes.
    fn put(&mut self, bytes: &[u8]);

    /// One byte.
    fn u8(&mut self, v: u8) {
        self.put(&[v]);
    }

    /// A number as binary64 little-endian.
    fn f64(&mut self, v: f64) {
        self.put(&v.to_le_bytes());
    }

    /// An optional number: 0, or 1 and the number.
    fn opt(&mut self, v: Option<f64>) {
        match v {
            None => self.u8(0),
            Some(x) => {
                self.u8(1);
                self.f64(x);
            }
        }
    }

    /// A part: its value and its tolerance.
    fn part(&mut self, p: Part) {
        self.f64(p.value);
        self.f64(p.tol);
    }

    /// An optional part: 0, or 1 and the part.
    fn opt_part(&mut self, p: Option<Part>) {
        match p {
            None => self.u8(0),
            Some(p) => {
                self.u8(1);
                self.part(p);
            }
        }
    }

    /// A design, stage then transistor: polarity (0 NPN, 1 PNP); VCC, R1, R2, RC, RE1, RE2
    /// value and tolerance each; RL optional; RS; CIN, COUT, CE optional parts; hFE min, typ,
    /// max, reverse, tc; IS; Early optional; VCE(sat); power rating; maximum junction
    /// temperature (246 bytes).
    fn design(&mut self, stage: &Stage, profile: &Profile) {
        self.u8(match stage.polarity {
            Polarity::Npn => 0,
            Polarity::Pnp => 1,
        });
        for p in [
            stage.vcc, stage.r1, stage.r2, stage.rc, stage.re1, stage.re2,
        ] {
            self.part(p);
        }
        self.opt(stage.rl);
        self.f64(stage.rs);
        for c in [stage.cin, stage.cout, stage.ce] {
            self.opt_part(c);
        }
        for v in [
            profile.beta_min,
            profile.beta_typ,
            profile.beta_max,
            profile.beta_rev,
            profile.beta_tc,
            profile.is_25,
        ] {
            self.f64(v);
        }
        self.opt(profile.early);
        for v in [profile.vce_sat, profile.power_25, profile.tj_max] {
            self.f64(v);
        }
    }
}

/// The canonical encoding fed into SHA-256 (see the module notes); a front end may append its
/// own canonical fields (a design file's requirement, series and identifier) after the settings.
#[derive(Clone)]
pub struct Canonical(Sha256);

impl Default for Canonical {
    fn default() -> Self {
        Self::new()
    }
}

/// Version byte of the canonical encoding.
const ENCODING_VERSION: u8 = 1;

impl Canonical {
    /// An empty encoding.
    pub fn new() -> Self {
        Self(Sha256::new())
    }

    /// Raw bytes. (Not inlined: the encoding makes some forty calls, and each inlined copy of the
    /// hash's buffering would cost the instrument flash.)
    #[inline(never)]
    pub fn bytes(&mut self, b: &[u8]) {
        self.0.update(b);
    }

    /// One byte.
    pub fn u8(&mut self, v: u8) {
        Encode::u8(self, v);
    }

    /// A number as binary64 little-endian, −0 as +0.
    #[inline(never)]
    pub fn f64(&mut self, v: f64) {
        let v = if v == 0.0 { 0.0 } else { v };
        self.bytes(&v.to_le_bytes());
    }

    /// An optional number: 0, or 1 and the number.
    pub fn opt(&mut self, v: Option<f64>) {
        Encode::opt(self, v);
    }

    /// A text: its length (u32 little-endian) and its UTF-8 bytes.
    pub fn str(&mut self, s: &str) {
        let n = u32::try_from(s.len()).unwrap_or(u32::MAX);
        self.bytes(&n.to_le_bytes());
        self.bytes(s.as_bytes());
    }

    /// The stage, the profile and the test settings, in the order of the module notes.
    #[inline(never)]
    pub fn settings(&mut self, stage: &Stage, profile: &Profile, settings: &TestSettings) {
        self.bytes(b"biasjig-settings");
        self.u8(ENCODING_VERSION);
        self.design(stage, profile);
        for v in [
            settings.temp_min_c,
            settings.temp_max_c,
            settings.meter.gain_error,
            settings.meter.offset,
            settings.meter.divider_tol,
        ] {
            self.f64(v);
        }
        self.opt(settings.inputs.r);
        self.u8(match settings.inputs.mode {
            InputMode::Together => 0,
            InputMode::One => 1,
        });
        // The signal meter only when it is not the default (digests of earlier settings stay).
        if settings.signal != crate::signaltest::SignalMeter::DEFAULT {
            self.bytes(b"signal");
            self.f64(settings.signal.gain_error);
            self.f64(settings.signal.floor);
        }
    }

    /// The SHA-256 of everything encoded.
    pub fn finish(self) -> Digest {
        Digest(self.0.finalize().into())
    }
}

impl Encode for Canonical {
    fn put(&mut self, bytes: &[u8]) {
        self.bytes(bytes);
    }

    /// −0 as +0 ([`Canonical::f64`]).
    fn f64(&mut self, v: f64) {
        Canonical::f64(self, v);
    }
}

/// The settings digest of a stage, its transistor and the test settings (see the module notes).
pub fn digest(stage: &Stage, profile: &Profile, settings: &TestSettings) -> Digest {
    let mut c = Canonical::new();
    c.settings(stage, profile, settings);
    c.finish()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::limits::Meter;
    use crate::settings::Inputs;

    #[test]
    fn sha256_of_abc_is_the_standards() {
        // FIPS 180-4 examples (NIST CSRC, SHA256.pdf): SHA-256("abc").
        let mut c = Canonical::new();
        c.bytes(b"abc");
        assert_eq!(
            c.finish().to_string(),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn every_setting_changes_the_digest_and_hex_round_trips() {
        let stage = crate::console::default_stage();
        let profile = Profile::default();
        let base = TestSettings::DEFAULT;
        let d0 = digest(&stage, &profile, &base);
        assert_eq!(Digest::parse(&d0.to_string()), Some(d0));
        let changed = [
            TestSettings {
                temp_max_c: 40.0,
                ..base
            },
            TestSettings {
                temp_min_c: 0.0,
                ..base
            },
            TestSettings {
                meter: Meter {
                    gain_error: 0.01,
                    ..base.meter
                },
                ..base
            },
            TestSettings {
                inputs: Inputs {
                    r: Some(1e6),
                    mode: InputMode::Together,
                },
                ..base
            },
            TestSettings {
                inputs: Inputs {
                    r: Some(1e6),
                    mode: InputMode::One,
                },
                ..base
            },
        ];
        for s in changed {
            assert_ne!(digest(&stage, &profile, &s), d0, "{s:?}");
        }
        let mut st = stage;
        st.vcc.tol = 0.1;
        assert_ne!(digest(&st, &profile, &base), d0);
        // −0 and +0 are the same number.
        let mut z = stage;
        z.rs = -0.0;
        let mut p = stage;
        p.rs = 0.0;
        assert_eq!(digest(&z, &profile, &base), digest(&p, &profile, &base));
    }
}
