//! The error model: how far the readings of a board with the hypothesised fault scatter around
//! its prediction (the other parts' tolerances, the ambient range, the supply reading, the meter
//! and probe noise), as a covariance over the readings, and the crude diagonal model of the
//! screen.

use super::model::{Ctx, Tweak};
use super::{ResistorMode, Suspect, DIM, FLOATING_NODE_V, GAIN_NOISE, PROBE_NOISE_V};
use crate::stage::{Capacitor, Resistor};

/// A symmetric matrix over the first `n` of [`DIM`] readings (the rest unused).
#[derive(Debug, Clone, Copy)]
pub(super) struct Sym {
    m: [[f64; DIM]; DIM],
    n: usize,
    /// Nothing off the diagonal (the screen's crude model): [`Sym::quad`] skips it.
    diagonal: bool,
}

#[expect(
    clippy::indexing_slicing,
    clippy::needless_range_loop,
    reason = "fixed DIM×DIM arrays indexed by loop counters below n <= DIM (row and column)"
)]
impl Sym {
    pub(super) fn diag(v: [f64; DIM], n: usize) -> Self {
        let mut m = [[0.0; DIM]; DIM];
        for k in 0..n.min(DIM) {
            m[k][k] = v[k];
        }
        Self {
            m,
            n: n.min(DIM),
            diagonal: true,
        }
    }

    /// Add the outer product s·sᵀ.
    pub(super) fn add_outer(&mut self, s: [f64; DIM]) {
        self.diagonal = false;
        for i in 0..self.n {
            for j in 0..self.n {
                self.m[i][j] += s[i] * s[j];
            }
        }
    }

    /// The inverse (the matrix is positive definite by construction) by Gauss-Jordan with
    /// partial pivoting, or the inverse of the diagonal when it is singular.
    pub(super) fn inverse(&self) -> Self {
        let n = self.n;
        let mut a = self.m;
        let mut inv = [[0.0; DIM]; DIM];
        for k in 0..n {
            inv[k][k] = 1.0;
        }
        let mut ok = true;
        for col in 0..n {
            let mut p = col;
            for row in col + 1..n {
                if libm::fabs(a[row][col]) > libm::fabs(a[p][col]) {
                    p = row;
                }
            }
            let piv = a[p][col];
            if !(piv.is_finite() && libm::fabs(piv) > 0.0) {
                ok = false;
                break;
            }
            a.swap(col, p);
            inv.swap(col, p);
            let r = 1.0 / piv;
            for j in 0..n {
                a[col][j] *= r;
                inv[col][j] *= r;
            }
            for row in 0..n {
                if row != col {
                    let f = a[row][col];
                    if f != 0.0 {
                        for j in 0..n {
                            a[row][j] -= f * a[col][j];
                            inv[row][j] -= f * inv[col][j];
                        }
                    }
                }
            }
        }
        if ok && inv.iter().flatten().all(|v| v.is_finite()) {
            // Symmetric to the last bit, so that [`Sym::quad`] may read the upper triangle only.
            for i in 0..n {
                for j in i + 1..n {
                    let v = 0.5 * (inv[i][j] + inv[j][i]);
                    inv[i][j] = v;
                    inv[j][i] = v;
                }
            }
            Self {
                m: inv,
                n,
                diagonal: false,
            }
        } else {
            let mut d = [0.0; DIM];
            for k in 0..n {
                d[k] = 1.0 / self.m[k][k];
            }
            Self::diag(d, n)
        }
    }

    /// rᵀ·M·r from the diagonal and the upper triangle (M is symmetric): about half the
    /// products of the full sum (each a software routine on the instrument).
    pub(super) fn quad(&self, r: [f64; DIM]) -> f64 {
        let mut q = 0.0;
        for i in 0..self.n {
            let mut off = 0.0;
            if !self.diagonal {
                for j in i + 1..self.n {
                    off += self.m[i][j] * r[j];
                }
            }
            q += r[i] * (self.m[i][i] * r[i] + 2.0 * off);
        }
        q
    }
}

/// The node left floating by a fault (measured through nothing but the meter): VB, VE, VC.
fn floating(suspect: Suspect) -> [bool; 3] {
    match suspect {
        Suspect::Resistor(Resistor::Re1 | Resistor::Re2, ResistorMode::Open) => {
            [false, true, false]
        }
        Suspect::Resistor(Resistor::Rc, ResistorMode::Open) => [false, false, true],
        _ => [false; 3],
    }
}

/// The covariance of the readings around the prediction of `suspect` at (`value`, `beta`), from
/// the other parts' tolerances, the ambient range, the supply reading's error, the meter and noise.
pub(super) fn covariance(
    ctx: &mut Ctx<'_>,
    suspect: Suspect,
    value: f64,
    beta: f64,
    y0: [f64; DIM],
) -> Sym {
    const INV_SQRT3: f64 = 0.577_350_269_189_625_8;
    // A node a fault leaves floating is held by the measuring input where one is modelled (the
    // prediction then includes it); only an ideal meter's reading of it is uncertain.
    let meter = ctx.settings.meter;
    let float = if ctx.settings.inputs.is_ideal() {
        floating(suspect)
    } else {
        [false; 3]
    };
    let mut diag = [0.0; DIM];
    for (k, (d, m)) in diag.iter_mut().zip(ctx.measured).enumerate() {
        if k < 3 || !cfg!(feature = "signal-test") {
            let s = meter.error(m) * INV_SQRT3;
            let extra = if float.get(k).copied().unwrap_or(false) {
                FLOATING_NODE_V
            } else {
                0.0
            };
            *d = s * s + PROBE_NOISE_V * PROBE_NOISE_V + extra * extra;
        } else {
            let s = ctx.settings.signal.error(m) * INV_SQRT3;
            *d = s * s + GAIN_NOISE * GAIN_NOISE;
        }
    }
    let mut cov = Sym::diag(diag, ctx.n);
    let fitted = match suspect {
        Suspect::Resistor(r, _) => Some(r),
        _ => None,
    };
    let mut add = |ctx: &mut Ctx<'_>, tweak: Tweak, k: f64| {
        if let Some(y) = ctx.predict(suspect, value, beta, tweak) {
            cov.add_outer(core::array::from_fn(|i| {
                (y.get(i).copied().unwrap_or(0.0) - y0.get(i).copied().unwrap_or(0.0)) * k
            }));
        }
    };
    for r in Resistor::ALL {
        let p = ctx.stage.part(r);
        if Some(r) == fitted || p.value.is_nan() || p.value <= 0.0 || p.tol.is_nan() || p.tol <= 0.0
        {
            continue;
        }
        // A step to the tolerance edge; a uniform spread has σ = tol/√3.
        add(ctx, Tweak::Scale(r, 1.0 + p.tol), INV_SQRT3);
    }
    // Capacitor tolerances move the gain readings only (none without the signal test).
    if cfg!(feature = "signal-test") && ctx.n > 3 {
        for c in Capacitor::ALL {
            let fitted_cap = matches!(suspect, Suspect::Capacitor(x, _) if x == c);
            match ctx.stage.capacitor(c) {
                Some(p) if !fitted_cap && p.tol > 0.0 => {
                    add(ctx, Tweak::ScaleCap(c, 1.0 + p.tol), INV_SQRT3);
                }
                _ => {}
            }
        }
    }
    let (temp_min_c, temp_max_c) = (ctx.settings.temp_min_c, ctx.settings.temp_max_c);
    if temp_max_c > temp_min_c {
        // Half the range as the step; a uniform spread over the range has σ = half/√3.
        add(ctx, Tweak::Temp(temp_max_c), INV_SQRT3);
    }
    let vcc = ctx.stage.vcc.value;
    let err = meter.error(vcc);
    add(ctx, Tweak::Supply(vcc + err), INV_SQRT3);
    cov
}

/// A crude diagonal error model used to locate a part value before the full one is built.
pub(super) fn crude_inverse(ctx: &Ctx<'_>) -> Sym {
    let meter = ctx.settings.meter;
    let vcc = ctx.stage.vcc.value;
    let mut d = [0.0; DIM];
    for (k, (d, m)) in d.iter_mut().zip(ctx.measured).enumerate() {
        let s = if k < 3 {
            meter.error(m) + 0.03 * libm::fabs(m) + 0.01 * vcc
        } else {
            ctx.settings.signal.error(m) + 0.05 * libm::fabs(m) + 0.02
        };
        *d = 1.0 / (s * s);
    }
    Sym::diag(d, ctx.n)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The product of the first three rows and columns of `a` with `x`.
    fn times(a: &Sym, x: [f64; 3]) -> [f64; 3] {
        core::array::from_fn(|i| (0..3).map(|j| a.m[i][j] * x[j]).sum())
    }

    #[test]
    fn inverse_of_a_symmetric_matrix() {
        // The three DC readings; the gain slots (none without `signal-test`) stay zero.
        let padded = |v: [f64; 3]| {
            let mut a = [0.0; DIM];
            a[..3].copy_from_slice(&v);
            a
        };
        let mut m = Sym::diag(padded([2.0, 3.0, 4.0]), 3);
        m.add_outer(padded([1.0, 0.5, -0.25]));
        let inv = m.inverse();
        // M·M⁻¹ = I, checked on a vector: M⁻¹ (M x) = x (every element of both, not only the
        // upper triangle).
        let x = [0.3, -1.2, 0.7];
        let back = times(&inv, times(&m, x));
        for (a, b) in back.iter().zip(x) {
            assert!((a - b).abs() < 1e-12, "{back:?}");
        }
    }
}
