//! Seeded generators for tests and benchmarks: the workspace's one random generator
//! ([`Rng`], defined in `crate::rng`), random DFAs ([`dfa`]) and random Boolean functions ([`logic`]).
//!
//! Compiled into the crate's own unit tests and, for the workspace's other tests,
//! benches and examples, behind the `testing` feature. Not part of the library's
//! interface: nothing outside tests and benchmarks should depend on it.

pub mod dfa;
pub mod logic;

pub use crate::rng::Rng;
