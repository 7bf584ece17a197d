//! Spec text through `driver::check_source` (parse, resolve, lower, check); a clean spec
//! goes on through tables, minimize (the printed spec checks again, `equiv` finds it
//! equal), tour (covers every transition), DOT, SVG and the CSV round trip.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        detent_fuzz::exercise_spec(text, detent_fuzz::Depth::default());
    }
});
