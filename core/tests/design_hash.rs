//! The design hash against its definition (docs/protocol.md, "Design hash"): FNV-1a 64 over the
//! documented canonical encoding of the stage and the transistor, recomputed here byte by byte
//! with an FNV-1a that is itself checked against the published test vectors; and the store
//! records' checksum, the same FNV-1a over everything before the record's last 8 bytes.

use biasjig_core::console::jig::RECORD_LEN;
use biasjig_core::console::record::{design_hash, encode_calibration};
use biasjig_core::console::{default_profile, default_stage, Calibration};
use biasjig_core::device::Profile;
use biasjig_core::stage::{Part, Polarity, Stage};
use biasjig_testkit::fixtures::{demo_profile, demo_stage};
use biasjig_testkit::fnv::fnv1a64;

/// The published FNV-1a 64 test vectors (Fowler, Noll, Vo, Eastlake, Hansen: "The FNV
/// Non-Cryptographic Hash Algorithm", IETF draft-eastlake-fnv, its FNV-1a 64 test vectors; from
/// memory): the function the design hash below is recomputed with.
#[test]
fn fnv1a_matches_the_published_test_vectors() {
    assert_eq!(fnv1a64(b""), 0xcbf2_9ce4_8422_2325);
    assert_eq!(fnv1a64(b"a"), 0xaf63_dc4c_8601_ec8c);
    assert_eq!(fnv1a64(b"foobar"), 0x8594_4171_f739_67e8);
}

/// The canonical encoding of docs/protocol.md: binary64 little-endian numbers, an optional
/// value as 0 or 1 and the value, in the documented order.
fn encoding(s: &Stage, p: &Profile) -> Vec<u8> {
    let mut b = vec![match s.polarity {
        Polarity::Npn => 0,
        Polarity::Pnp => 1,
    }];
    let num = |b: &mut Vec<u8>, x: f64| b.extend_from_slice(&x.to_le_bytes());
    let part = |b: &mut Vec<u8>, x: Part| {
        num(b, x.value);
        num(b, x.tol);
    };
    part(&mut b, s.vcc);
    for r in [s.r1, s.r2, s.rc, s.re1, s.re2] {
        part(&mut b, r);
    }
    let opt = |b: &mut Vec<u8>, x: Option<f64>| match x {
        None => b.push(0),
        Some(x) => {
            b.push(1);
            num(b, x);
        }
    };
    opt(&mut b, s.rl);
    num(&mut b, s.rs);
    for c in [s.cin, s.cout, s.ce] {
        match c {
            None => b.push(0),
            Some(c) => {
                b.push(1);
                part(&mut b, c);
            }
        }
    }
    for x in [
        p.beta_min, p.beta_typ, p.beta_max, p.beta_rev, p.beta_tc, p.is_25,
    ] {
        num(&mut b, x);
    }
    opt(&mut b, p.early);
    for x in [p.vce_sat, p.power_25, p.tj_max] {
        num(&mut b, x);
    }
    b
}

#[test]
fn the_design_hash_is_fnv1a_of_the_documented_encoding() {
    // With every optional value present: the documented 246 bytes.
    let full = Profile {
        early: Some(80.0),
        ..default_profile()
    };
    let bytes = encoding(&default_stage(), &full);
    assert_eq!(bytes.len(), 246);
    assert_eq!(design_hash(&default_stage(), &full), fnv1a64(&bytes));
    // Without load capacitors, a PNP stage, no Early voltage.
    let pnp = Stage {
        polarity: Polarity::Pnp,
        ..demo_stage()
    };
    for (s, p) in [(demo_stage(), demo_profile()), (pnp, default_profile())] {
        assert_eq!(design_hash(&s, &p), fnv1a64(&encoding(&s, &p)), "{s:?}");
    }
}

#[test]
fn a_store_record_is_sealed_with_fnv1a_of_its_body() {
    let mut rec = [0u8; RECORD_LEN];
    encode_calibration(&Calibration::default(), &mut rec);
    let (body, sum) = rec.split_at(RECORD_LEN - 8);
    assert_eq!(sum, fnv1a64(body).to_le_bytes());
}
