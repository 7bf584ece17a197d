//! detent runtime: what generated state machines share. `no_std`, allocation-free.
#![no_std]
#![forbid(unsafe_code)]

pub use detent_macros::machine;
