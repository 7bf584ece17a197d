//! Machines built from a grammar (the differential tests' generator, `tests/src/gen.rs`,
//! with its choices read from the input), so nearly every input is a valid spec: it must
//! check with no error (a `property` error only when the builder wrote a property), then
//! goes through minimize, equiv, tour, logic synthesis and every emitter (Rust table and
//! match, C, Verilog module and testbench, JavaScript, DOT, SVG).
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    detent_fuzz::exercise_structured(data, &mut |_, run| run());
});
