//! Every diagnostic a user of the macros can see, pinned (trybuild).
//!
//! Warnings cannot be pinned in a passing test, so the warning cases use
//! `#![deny(deprecated)]` (the lint that carries detent's warnings on stable Rust),
//! which turns them into errors whose text trybuild compares.

#[test]
fn ui() {
    let t = trybuild::TestCases::new();
    t.compile_fail("tests/ui/*.rs");
}
