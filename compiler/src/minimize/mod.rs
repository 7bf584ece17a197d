//! Minimization: partition refinement (Hopcroft), equivalence, distinguishing words.
//!
//! [`partition`] is the machine-independent core: a complete deterministic transition
//! system over dense ids, Hopcroft's O(k n log n) refinement, a naive Moore baseline,
//! reachability, quotients, and a product-machine search for shortest distinguishing
//! words. Encoding detent machines onto it (states x (event, guard atom) symbols, with
//! outputs and action signatures in the labels) lives beside it.

pub mod partition;
