//! The first pass: the corrected hand method at one collector current, the ladder of currents
//! it is tried at, and which requirement is out of reach when none works.

use crate::device::Profile;
use crate::series::Series;
use crate::stage::Polarity;
use crate::thermal_voltage;

use super::{par, DesignError, Requirement, IC_LADDER_MAX, IC_LADDER_MIN, R_MAX, R_MIN};

/// The first pass at one collector current: exact (not yet standard) values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ideal {
    /// Design collector current, A.
    pub ic: f64,
    /// Supply to base, Ω.
    pub r1: f64,
    /// Base to ground, Ω.
    pub r2: f64,
    /// Collector resistor, Ω.
    pub rc: f64,
    /// Unbypassed emitter resistor, Ω.
    pub re1: f64,
    /// Bypassed emitter resistor, Ω.
    pub re2: f64,
    /// Emitter voltage aimed at, V (magnitude, from the emitter-side rail).
    pub ve: f64,
    /// Divider Thévenin voltage, V (from the emitter-side rail).
    pub vbb: f64,
    /// Quiescent VCE, V (magnitude).
    pub vce: f64,
    /// Expected gain magnitude from the source EMF.
    pub gain: f64,
    /// Expected swing at the load, V peak-to-peak.
    pub swing_pp: f64,
    /// Expected input impedance (without RS), Ω.
    pub zin: f64,
}

/// Why the first pass has no answer at a current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FirstPassMiss {
    /// The gain is out of reach at this current (RE1 would be below [`R_MIN`]); the most there.
    Gain(f64),
    /// The swing is out of reach at this current; the most there, V.
    Swing(f64),
    /// The bias does not fit the supply, or values fall outside [`R_MIN`]..[`R_MAX`].
    Bias,
    /// The transistor would dissipate more than 80 % of its rating at the highest ambient; W.
    Dissipation(f64),
}

/// The emitter voltage the first pass aims at, V: a tenth of the supply (common practice), or
/// more where the ambient range needs it (VBE moves about 2.1 mV/°C; keep that below a tenth of
/// VE), at most a fifth of the supply; `low` asks for the least (6 % of the supply, 0.3 V).
fn ve_target(req: &Requirement, low: bool) -> f64 {
    let vcc = req.vcc;
    if low {
        return (0.06 * vcc).max(0.3).min(0.2 * vcc);
    }
    let span = req.temp_max - req.temp_min;
    (0.1 * vcc).max(0.0021 * span / 0.1).min(0.2 * vcc)
}

/// Thévenin resistance of the divider per ohm of emitter resistance that keeps IC within
/// `drift` across hFE min..max, never above the common-practice 0.1·hFE(min).
fn stiffness(profile: &Profile, drift: f64) -> f64 {
    let (bmin, bmax) = (profile.beta_min + 1.0, profile.beta_max + 1.0);
    let rule = 0.1 * profile.beta_min;
    let den = 1.0 / bmin - (1.0 + drift) / bmax;
    if den > 0.0 {
        (drift / den).min(rule)
    } else {
        rule
    }
}

/// The corrected hand method at collector current `ic` (see the module text). `low_ve` aims the
/// emitter voltage at its least instead of its usual value.
pub fn first_pass(
    req: &Requirement,
    profile: &Profile,
    ic: f64,
    low_ve: bool,
) -> Result<Ideal, FirstPassMiss> {
    pass(req, profile, ic, low_ve, true, true)
}

/// The first pass; `check_gain` false holds RE1 at its least instead of failing, `check_swing`
/// false accepts any swing (both for telling which requirement is out of reach).
fn pass(
    req: &Requirement,
    profile: &Profile,
    ic: f64,
    low_ve: bool,
    check_gain: bool,
    check_swing: bool,
) -> Result<Ideal, FirstPassMiss> {
    let vt = thermal_voltage(req.temp);
    let beta = profile.beta_at(profile.beta_typ, req.temp);
    let alpha = beta / (beta + 1.0);
    let ie = ic / alpha;
    let re = vt / ie;
    let vbe = vt * libm::log(ic / profile.is_at(req.temp) + 1.0);
    let vcc = req.vcc;
    let u = stiffness(profile, 0.05);
    let mut ve = ve_target(req, low_ve);
    let mut k = 1.0;
    let mut out = None;
    for _ in 0..4 {
        // Centre the Q-point: VCE − VCE(sat) = IC·(Rp + RE1) with RE1 = k·α·Rp/A − re.
        let v_room = vcc - ve - profile.vce_sat;
        if !(v_room > 0.0) {
            return Err(FirstPassMiss::Bias);
        }
        let m = 1.0 + k * alpha / req.gain;
        let w = v_room / ic + re;
        let rc = match req.rl {
            Some(rl) => {
                let b = rl * (1.0 + m) - w;
                0.5 * (-b + libm::sqrt(b * b + 4.0 * w * rl))
            }
            None => w / (1.0 + m),
        };
        let rp = req.rl.map_or(rc, |rl| par(rc, rl));
        let re1 = k * alpha * rp / req.gain - re;
        let swing = 2.0 * ic * rp;
        if re1 < R_MIN && check_gain {
            // The most gain here: RE1 at its least.
            return Err(FirstPassMiss::Gain(k * alpha * rp / (re + R_MIN)));
        }
        let re1 = re1.max(R_MIN);
        let re_total = ve / ie;
        let re2 = (re_total - re1).max(0.25 * re1).max(R_MIN);
        let re_total = re1 + re2;
        ve = ie * re_total;
        let mut rth = u * re_total;
        let mut vbb = vbe + ve + rth * ic / beta;
        // A divider resistor above R_MAX (a small current from a high supply): a stiffer
        // divider, which only steadies the bias more, brings it within range. (Refusing here
        // instead refused a 24 V, 300 µA stage that the standard values build.)
        for _ in 0..3 {
            let big = (rth * vcc / vbb).max(rth * vcc / (vcc - vbb));
            if !(big > R_MAX) {
                break;
            }
            rth *= 0.995 * R_MAX / big;
            vbb = vbe + ve + rth * ic / beta;
        }
        if !(vbb < 0.95 * vcc) {
            return Err(FirstPassMiss::Bias);
        }
        let r1 = rth * vcc / vbb;
        let r2 = rth * vcc / (vcc - vbb);
        let zin = par(rth, (beta + 1.0) * (re + re1));
        k = if req.rs > 0.0 {
            zin / (zin + req.rs)
        } else {
            1.0
        };
        let vce = vcc - ic * rc - ve;
        let gain = k * alpha * rp / (re + re1);
        // R1 runs from the supply to the base: on the collector side for NPN, on the emitter
        // side for PNP.
        let (r1, r2) = match req.polarity {
            Polarity::Npn => (r1, r2),
            Polarity::Pnp => (r2, r1),
        };
        out = Some((
            Ideal {
                ic,
                r1,
                r2,
                rc,
                re1,
                re2,
                ve,
                vbb,
                vce,
                gain,
                swing_pp: swing,
                zin,
            },
            swing,
        ));
    }
    let (ideal, swing) = out.ok_or(FirstPassMiss::Bias)?;
    // The gain error left by the last update of k (a few percent at most) is the search's job.
    if swing < req.swing_pp && check_swing {
        return Err(FirstPassMiss::Swing(swing));
    }
    let values = [ideal.r1, ideal.r2, ideal.rc, ideal.re1, ideal.re2];
    if !values
        .iter()
        .all(|v| v.is_finite() && (R_MIN..=R_MAX).contains(v))
    {
        return Err(FirstPassMiss::Bias);
    }
    let p = ic * ideal.vce;
    if p > 0.8 * profile.power_rating_at(req.temp_max) {
        return Err(FirstPassMiss::Dissipation(p));
    }
    Ok(ideal)
}

/// The collector currents of the ladder: E6 values from [`IC_LADDER_MIN`] to [`IC_LADDER_MAX`].
pub(super) fn ladder() -> impl Iterator<Item = f64> {
    (0..31)
        .filter_map(|k| Series::E6.step(IC_LADDER_MIN, k))
        .filter(|&i| i <= IC_LADDER_MAX * (1.0 + 1e-9))
}

/// The least collector current between `lo` (fails) and `hi` (works) at which the first pass
/// works, by bisection in log current, A.
pub(super) fn least_current(req: &Requirement, profile: &Profile, lo: f64, hi: f64) -> f64 {
    let works = |i: f64| {
        first_pass(req, profile, i, false).is_ok() || first_pass(req, profile, i, true).is_ok()
    };
    let (mut a, mut b) = (libm::log(lo), libm::log(hi));
    for _ in 0..24 {
        let m = 0.5 * (a + b);
        if works(libm::exp(m)) {
            b = m;
        } else {
            a = m;
        }
    }
    libm::exp(b)
}

/// Which requirement is out of reach at every current of the ladder: gain alone, swing alone,
/// or the two together.
pub(super) fn out_of_reach(req: &Requirement, profile: &Profile) -> DesignError {
    let (mut gain_ok, mut swing_ok) = (false, false);
    let (mut best_gain, mut best_swing) = (0.0_f64, 0.0_f64);
    for i in ladder() {
        for low in [false, true] {
            match pass(req, profile, i, low, true, false) {
                Ok(_) => gain_ok = true,
                Err(FirstPassMiss::Gain(g)) => best_gain = best_gain.max(g),
                Err(_) => {}
            }
            match pass(req, profile, i, low, false, true) {
                Ok(_) => swing_ok = true,
                Err(FirstPassMiss::Swing(s)) => best_swing = best_swing.max(s),
                Err(_) => {}
            }
        }
    }
    if !gain_ok {
        DesignError::GainOutOfReach {
            gain: req.gain,
            best: best_gain,
        }
    } else if !swing_ok {
        // The swing grows about in proportion to the supply's headroom.
        let needs_vcc = if best_swing > 0.0 {
            1.1 * req.vcc * req.swing_pp / best_swing
        } else {
            2.0 * req.vcc
        };
        DesignError::SwingOutOfReach {
            swing: req.swing_pp,
            best: best_swing,
            needs_vcc,
        }
    } else {
        DesignError::GainAndSwing {
            gain: req.gain,
            swing: req.swing_pp,
        }
    }
}
