//! Back ends: code and drawings generated from a resolved [`crate::model::Machine`]
//! (or, for [`svg`], from a machine-independent diagram description).

pub mod c;
pub mod rust;
pub mod svg;
