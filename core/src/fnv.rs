//! FNV-1a, 64 bits: the one hash of the design records and of the stored records' check sums
//! (offset basis 0xcbf29ce484222325, prime 0x100000001b3; the public-domain Fowler–Noll–Vo
//! definition).

/// The FNV-1a 64 offset basis: the hash of no bytes.
pub const OFFSET_BASIS: u64 = 0xcbf2_9ce4_8422_2325;
/// The FNV-1a 64 prime.
pub const PRIME: u64 = 0x0000_0100_0000_01b3;

/// FNV-1a 64 of `bytes`, continuing from `h` (start with [`OFFSET_BASIS`]): a hash fed in
/// pieces equals the hash of the pieces joined.
pub fn fnv1a64_from(h: u64, bytes: &[u8]) -> u64 {
    bytes
        .iter()
        .fold(h, |h, &b| (h ^ u64::from(b)).wrapping_mul(PRIME))
}

/// FNV-1a 64 of `bytes`, used to compare designs in logs and hand-overs.
pub fn fnv1a64(bytes: &[u8]) -> u64 {
    fnv1a64_from(OFFSET_BASIS, bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The published FNV-1a 64 test vectors: "", "a" and "foobar" from Appendix C ("A Few Test
    /// Vectors") of the IETF draft "The FNV Non-Cryptographic Hash Algorithm"
    /// (draft-eastlake-fnv); "b", "c" and "foo" from the FNV authors' test suite (`test_fnv.c`,
    /// the FNV-1a 64 table).
    #[test]
    fn published_test_vectors() {
        for (text, want) in [
            (&b""[..], 0xcbf2_9ce4_8422_2325_u64),
            (b"a", 0xaf63_dc4c_8601_ec8c),
            (b"b", 0xaf63_df4c_8601_f1a5),
            (b"c", 0xaf63_de4c_8601_eff2),
            (b"foo", 0xdcb2_7518_fed9_d577),
            (b"foobar", 0x8594_4171_f739_67e8),
        ] {
            assert_eq!(fnv1a64(text), want, "{:?}", core::str::from_utf8(text));
        }
    }

    /// A hash fed in pieces equals the hash of the whole (the records hash field by field).
    #[test]
    fn pieces_hash_as_the_whole() {
        let h = fnv1a64_from(fnv1a64_from(OFFSET_BASIS, b"foo"), b"bar");
        assert_eq!(h, fnv1a64(b"foobar"));
    }
}
