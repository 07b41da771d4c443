//! # biasjig-core
//!
//! Everything biasjig computes about a discrete common-emitter stage with voltage-divider bias, in a
//! `no_std`, allocation-free and panic-free library that runs on a PC and on a small microcontroller.
//!
//! The modules are layers; each depends only on the ones above it in this list:
//!
//! | layer | module | job |
//! | --- | --- | --- |
//! | numbers | [`units`] | parse and print engineering values (SI prefixes, IEC 60062 codes) |
//! | numbers | [`series`] | IEC 60063 E-series, nearest and neighbour values, IEC 60062 colour bands |
//! | parts | [`device`] | the transistor profile and its temperature laws |
//! | parts | [`stage`] | the stage: polarity, supply, parts with tolerances; faults |
//! | engine | [`solve`] | the exact DC operating point (transport-form Ebers-Moll) |
//! | engine | [`estimate`] | the hand estimate practitioners compare with |
//! | engine | [`signal`] | midband small-signal gain, impedances and swing |
//! | engine | [`lowfreq`] | low-frequency poles and the -3 dB corner |
//! | engine | [`response`] | the complex gain at any frequency, good or with a faulty capacitor |
//! | engine | [`power`] | dissipation and supply current |
//! | engine | [`predict`] | all of the above for one stage in one call |
//! | job | [`common`] | what the job layers share: nodes, ranges, the variation, the spread's error |
//! | job | [`design`] | from a requirement to ranked standard-value part lists |
//! | job | [`spread`] | worst case, Monte Carlo and sensitivity |
//! | job | [`limits`] | guard-banded pass windows per node |
//! | job | [`signaltest`] | test tones: the gain's spread, windows, proposed frequencies |
//! | job | [`settings`] | the test settings (ambient, meter, measuring inputs), defaults, digest |
//! | job | [`judge`] | the one judging path: supply, windows, verdict, diagnosis |
//! | job | [`check`] | measured against limits: verdict and derived quantities |
//! | job | [`diagnose`] | ranked single-fault hypotheses |
//! | job | [`explain`] | faults in plain words, the measurement that separates them |
//! | numbers | [`fnv`] | FNV-1a 64, the hash of design records and stored records |
//! | numbers | [`goertzel`] | the amplitude of one tone in sampled data (single precision) |
//! | front | [`console`] | the line console protocol over `embedded-io` |
//!
//! Units: SI base units everywhere inside (V, A, Ω, F, Hz, W, °C for ambient temperature). Tolerances
//! are fractions (0.05 for 5 %) unless a name says `pct`.
//!
//! Cost: the engine uses `f64` throughout. On cores without a double-precision FPU (Cortex-M0+, M4F)
//! every operation is a software routine; one operating-point solve is a few thousand of them.
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::panic,
        clippy::indexing_slicing,
        clippy::unreachable,
        clippy::todo,
        clippy::unimplemented
    )
)]

#[macro_use]
mod macros;

mod acnet;
pub mod check;
pub mod common;
pub mod console;
pub mod design;
pub mod device;
pub mod diagnose;
pub mod estimate;
pub mod explain;
pub mod fnv;
pub mod goertzel;
pub mod judge;
pub mod kv;
pub mod limits;
pub mod lowfreq;
mod order;
pub mod power;
pub mod predict;
pub mod response;
pub mod series;
pub mod settings;
pub mod signal;
pub mod signaltest;
pub mod solve;
pub mod spread;
pub mod stage;
pub mod units;

/// Boltzmann constant k, J/K (SI 2019, exact).
pub const BOLTZMANN: f64 = 1.380_649e-23;
/// Elementary charge q, C (SI 2019, exact).
pub const ELEMENTARY_CHARGE: f64 = 1.602_176_634e-19;
/// 0 °C in kelvin.
pub const ZERO_CELSIUS_K: f64 = 273.15;

/// Thermal voltage kT/q in volts at an ambient temperature in °C.
pub fn thermal_voltage(temp_c: f64) -> f64 {
    BOLTZMANN * (temp_c + ZERO_CELSIUS_K) / ELEMENTARY_CHARGE
}
