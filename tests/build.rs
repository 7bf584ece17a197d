//! Compiles the committed generated C of `tests/c/specs/bilge_pump.detent` (in
//! `tests/c/ffi/`) into a static library, so the FFI test can drive it from Rust.
//! The test `ffi_files_are_fresh` keeps those files equal to what `gen c` writes.

fn main() {
    println!("cargo:rerun-if-changed=c/ffi/bilge_pump.c");
    println!("cargo:rerun-if-changed=c/ffi/bilge_pump.h");
    cc::Build::new()
        .file("c/ffi/bilge_pump.c")
        .include("c/ffi")
        .std("c99")
        .flag_if_supported("-Wall")
        .flag_if_supported("-Wextra")
        .flag_if_supported("-pedantic")
        .warnings_into_errors(true)
        .compile("detent_c_ffi");
}
