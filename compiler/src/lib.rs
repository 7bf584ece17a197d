//! detent-compiler: the engine behind the `detent` CLI and the `detent::machine!` macro.
//!
//! Data flows one way: [`syntax`] (tokens to AST) -> [`model`] (resolved machine)
//! -> {[`check`], [`minimize`], [`tour`], [`logic`]} -> [`emit`]. The reference
//! interpreter in [`interp`] defines what a machine means; every back end is tested
//! against it.

pub mod check;
pub mod diag;
pub mod emit;
mod fxhash;
pub mod import;
pub mod interp;
pub mod logic;
pub mod minimize;
pub mod model;
pub mod syntax;
pub mod table;
#[cfg(test)]
mod test_support;
pub mod tour;
pub mod trace;
