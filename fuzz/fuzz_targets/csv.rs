//! CSV text through `import`; what imports is checked, and a clean machine's own table
//! imports again.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        detent_fuzz::exercise_csv(text);
    }
});
