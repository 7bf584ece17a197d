//! Back ends that turn a machine (or a machine-independent description of one) into
//! text for people and tools. [`svg`] draws diagrams with detent's own layered layout;
//! [`diagram`] builds the drawing of a machine (labels shared by every diagram back
//! end); [`dot`] writes it for Graphviz.

pub mod diagram;
pub mod dot;
pub mod svg;
