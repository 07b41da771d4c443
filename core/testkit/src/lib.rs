//! The shared set-up of biasjig's core tests, benches, examples and fuzz harness, written once:
//!
//! - [`fixtures`]: stages and transistors built from their figures, the demo scenario of the
//!   project brief (invented), the invented test designs of the sweeps, engine readings of a
//!   board with a fault;
//! - [`rng`]: the seeded generator (SplitMix64 of `rand_xoshiro`), the same numbers everywhere;
//! - [`session`]: a console session in memory (`Vec<u8>` as the embedded-io writer), the
//!   framing checks of every reply, and the jig that reads the engine's board;
//! - [`sweep`]: the fault lists and the tally of the seeded check-and-diagnose sweeps;
//! - [`corners`]: the tests' own corner walk of a design (tolerance, hFE, ambient);
//! - [`bench`](mod@bench): the command line of the benches (the convention of scripts/instructions.sh);
//! - [`fnv`]: FNV-1a 64, checked against the published test vectors, for the record checksum
//!   and the design hash.
//!
//! Nothing here is used by the product: it is a dev-dependency only.

pub mod bench;
pub mod corners;
pub mod fixtures;
pub mod fnv;
pub mod rng;
pub mod session;
pub mod sweep;
