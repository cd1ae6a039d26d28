//! Fuzz target: arbitrary bytes into the annotations reader (see sextant::robustness).
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sextant::robustness::annotations(data);
});
