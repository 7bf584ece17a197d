//! Trace text through the trace reader and `run` (JSON and text forms) on the example
//! machines: the first line names the machine, the rest is the trace.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        detent_fuzz::exercise_trace(text);
    }
});
