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
//! Warnings (unreachable states, unused declarations, ...) surface as compiler
//! warnings through a deprecated dummy item used at the offending span: stable Rust
//! has no warning API for procedural macros. `#[allow(deprecated)]` silences them and
//! `#![deny(deprecated)]` makes them errors.
use proc_macro::TokenStream;

mod expand;

/// Expands one or more machine specs written inline into one module each.
#[proc_macro]
pub fn machine(input: TokenStream) -> TokenStream {
    expand::inline(input.into()).into()
}

/// Expands the machine spec of a file into the `mod` it is written on.
#[proc_macro_attribute]
pub fn machine_file(args: TokenStream, item: TokenStream) -> TokenStream {
    expand::file(args.into(), item.into()).into()
}
