//! Back ends that turn a machine (or a machine-independent description of one) into
//! text for people and tools. [`svg`] draws diagrams with detent's own layered layout.

pub mod svg;
