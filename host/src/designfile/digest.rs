//! The file digest: SHA-256 over the settings digest's fields followed by the rest of the file.

use biasjig_core::settings::{Canonical, Digest};

use super::DesignDoc;

/// The file digest: SHA-256 over the settings digest's fields followed by the rest of the file
/// (see the module notes). Every value the file holds is in it.
pub fn digest(doc: &DesignDoc) -> Digest {
    let mut c = Canonical::new();
    c.settings(&doc.stage, &doc.profile, &doc.test);
    c.bytes(b"design-file");
    c.u8(2);
    c.str(&doc.id);
    c.str(&doc.hash);
    for s in doc.series {
        match s {
            None => c.u8(0),
            Some(s) => {
                c.u8(1);
                c.str(s.name());
            }
        }
    }
    for t in [doc.temp_c, doc.temp_min, doc.temp_max] {
        c.f64(t);
    }
    match &doc.requirement {
        None => c.u8(0),
        Some(r) => {
            c.u8(1);
            c.f64(r.vcc);
            c.f64(r.gain);
            c.opt(r.rl);
            c.f64(r.rs);
            c.f64(r.ic_max);
            c.f64(r.swing_pp);
            c.opt(r.f_low);
            c.str(r.series.name());
            c.f64(r.tol);
            c.str(r.cap_series.name());
            c.f64(r.cap_tol);
            c.str(r.hold.name());
            c.f64(r.gain_tol);
        }
    }
    match &doc.predicted {
        None => c.u8(0),
        Some(p) => {
            c.u8(1);
            for v in [
                p.ic,
                p.vb,
                p.ve,
                p.vc,
                p.vce,
                p.gain,
                p.swing_pp,
                p.f_low,
                p.supply_current,
                p.transistor_power,
            ] {
                c.f64(v);
            }
        }
    }
    match &doc.held {
        None => c.u8(0),
        Some(h) => {
            c.u8(1);
            for v in [h.gain_min, h.gain_max, h.swing_pp_min, h.ic_max] {
                c.f64(v);
            }
        }
    }
    c.finish()
}
