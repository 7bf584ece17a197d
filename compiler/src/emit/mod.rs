//! Back ends: code generated from a resolved [`crate::model::Machine`].

pub mod rust;
