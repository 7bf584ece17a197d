//! Shared helpers for the workspace-level tests: a random spec generator and the
//! harnesses that run back ends against the reference interpreter.

pub mod gen;
