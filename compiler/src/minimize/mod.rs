//! Minimization: partition refinement (Hopcroft), equivalence, distinguishing words.
//!
//! Rule choice comes from the machines' lowered forms ([`crate::model::lower`]), which
//! every part here reads and none decides.
//!
//! [`partition`] is the machine-independent core: a complete deterministic transition
//! system over dense ids, Hopcroft's O(k n log n) refinement, a naive Moore baseline,
//! reachability, quotients, and a product-machine search for shortest distinguishing
//! words. [`encode`] puts detent machines onto it (states x (event class, guard atom)
//! symbols, with outputs and action sequences in the labels); [`machine`] minimizes a
//! machine, builds its quotient machine and prints it as a spec; [`equiv`] compares two
//! machines.

pub mod encode;
pub mod equiv;
pub mod machine;
pub mod partition;

pub use machine::{
    minimize, minimized_machine, minimized_spec, quotient, quotient_machine, Minimization, Quotient,
};
