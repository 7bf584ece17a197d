//! Procedural macros for detent. Thin: parse, hand to `detent-compiler`, return tokens.
//!
//! - `machine! { ... }`: one or more machine specs written inline; each becomes a
//!   `<vis> mod <snake_name>`. Spec errors are compile errors at the offending token.
//! - `#[machine_file(file = "x.detent", dispatch = "table|match", machine = "Name")]`
//!   on a `mod`: the spec is read from a file (path relative to `CARGO_MANIFEST_DIR`)
//!   and the generated items go into that `mod`, next to the items written there.
//!   (A crate cannot export a function-like and an attribute macro under one name, so
//!   the file form is `machine_file`.)
//!
//! Where the file form puts the code: a file with one machine (or `machine = "Name"`
//! picking one) has its items (`State`, `Event`, `Outputs`, `Hooks`, `Machine`, the
//! private tables) placed directly in the user's `mod`, whose name and visibility
//! win over the spec's; the machine's doc comment is added when the `mod` has none.
//! A file with several machines gets one `<vis> mod <snake_name>` per machine inside
//! the user's `mod`. The user's items stay; they must not reuse the generated names.
//! `const _: &str = include_str!("<spec>")` makes cargo rebuild when the spec changes.
//!
//! Every machine goes through `detent_compiler::driver` (as in the CLI: every lint);
//! a machine with errors generates no code. Under `#[minimize]` the code is generated
//! from the minimized machine, merged states kept as `State` aliases (as `gen rust`).
//!
//! Compile time: see BENCHMARKS.md, "Macro" (`cargo bench -p detent-tests --bench
//! macro_build`): a debug build of a crate expanding a 100- or 1,000-state machine
//! against the same crate empty and against the same crate holding the `gen rust`
//! output. Set `[profile.dev.build-override] opt-level = 3` in the user's Cargo.toml
//! (common practice for heavy procedural macros): the checker and generator inside
//! the macro then run optimized.
//!
//! Warnings (unreachable states, unused declarations, ...) surface as compiler
//! warnings through a deprecated dummy item used at the offending span: stable Rust
//! has no warning API for procedural macros. `#[allow(deprecated)]` silences them and
//! `#![deny(deprecated)]` makes them errors.

#![forbid(unsafe_code)]
#![warn(missing_docs)]
use proc_macro::TokenStream;

mod expand;

/// Expands one or more machine specs written inline into one module each.
///
/// For a spec in a file, the form is `#[detent::machine_file(file = "x.detent")]` on a
/// `mod`: one name cannot be both a function-like and an attribute macro on stable Rust.
#[proc_macro]
pub fn machine(input: TokenStream) -> TokenStream {
    expand::inline(input.into()).into()
}

/// Expands the machine spec of a file into the `mod` it is written on.
#[proc_macro_attribute]
pub fn machine_file(args: TokenStream, item: TokenStream) -> TokenStream {
    expand::file(args.into(), item.into()).into()
}
