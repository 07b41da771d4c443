//! cargo fuzz target: [`biasjig_fuzz::console_round_trip`] on the fuzzer's bytes.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    biasjig_fuzz::console_round_trip(data);
});
