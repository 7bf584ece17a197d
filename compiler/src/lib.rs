//! detent-compiler: the engine behind the `detent` CLI and the `detent::machine!` macro.
//!
//! Data flows one way: [`syntax`] (tokens to AST) -> [`model`] (resolved machine and
//! its lowered form) -> {[`check`], [`minimize`], [`tour`], [`logic`]} -> [`emit`]. The
//! reference interpreter in [`interp`] defines what a machine means; every back end is
//! tested against it. [`driver`] is the pipeline from a spec file or the macro's tokens
//! to checked machines that both front ends use; [`report`] holds the typed
//! machine-readable reports the CLI prints.

#![forbid(unsafe_code)]
#![warn(missing_docs)]

pub mod check;
pub mod configs;
pub mod diag;
pub mod driver;
pub mod emit;
mod fxhash;
pub mod import;
pub mod interp;
pub mod logic;
pub mod minimize;
pub mod model;
pub mod naming;
pub mod report;
pub mod rng;
pub mod syntax;
pub mod table;
#[cfg(test)]
mod test_support;
#[cfg(any(test, feature = "testing"))]
pub mod testing;
pub mod tour;
pub mod trace;
pub mod trace_text;
