//! Fuzz target: arbitrary bytes into the ratings reader (see sextant::robustness).
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sextant::robustness::ratings(data, false);
    sextant::robustness::ratings(data, true);
});
