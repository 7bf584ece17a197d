//! Back ends: code and drawings generated from a resolved [`crate::model::Machine`].

pub mod c;
