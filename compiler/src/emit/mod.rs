//! Back ends: code and drawings generated from a resolved [`crate::model::Machine`].
//! [`c`] writes C99 tables; [`diagram`] builds the drawing of a machine (labels shared by
//! every diagram back end); [`dot`] writes it for Graphviz; [`svg`] draws diagrams with
//! detent's own layered layout from a machine-independent description; [`rust`] writes
//! `no_std` Rust with table or `match` dispatch.

pub mod c;
pub mod counters;
pub mod diagram;
pub mod dot;
pub mod js;
pub mod page;
pub mod rust;
pub mod svg;
pub mod timers;
