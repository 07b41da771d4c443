//! FNV-1a 64 (offset basis 0xcbf29ce484222325, prime 0x100000001b3): the function of the
//! record checksum and the design hash (docs/protocol.md, "Design hash"), written here once so
//! that tests can seal a record or recompute a hash independently of the core. Checked against
//! the published test vectors in core/tests/design_hash.rs.

/// FNV-1a 64 of `bytes`.
pub fn fnv1a64(bytes: &[u8]) -> u64 {
    bytes.iter().fold(0xcbf2_9ce4_8422_2325, |h, &b| {
        (h ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}
