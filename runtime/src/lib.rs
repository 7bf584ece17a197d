//! detent runtime: what generated state machines share. `no_std`, allocation-free,
//! no `unsafe`.
//!
//! - [`Rejected`], [`InvalidState`]: the errors of `step` and `restore`.
//! - [`StateMachine`]: the trait every generated `Machine` implements.
//! - [`EventQueue`]: a single-producer single-consumer event queue (heapless) for
//!   events posted by an interrupt handler and drained by the main loop.
//! - [`machine!`]: the procedural macro, re-exported from `detent-macros`.
//!
//! Generated code is a tool output, not a certified component: for safety functions
//! follow the applicable functional-safety standard (IEC 61508 or your sector's) and
//! have the design reviewed by qualified people.
//!
//! # Features (all additive)
//!
//! | feature       | effect                                                             |
//! |---------------|--------------------------------------------------------------------|
//! | `defmt`       | `defmt::Format` on the runtime types and on generated types        |
//! | `serde`       | `serde::Serialize` / `Deserialize` on the same                     |
//! | `defmt-trace` | implies `defmt`; one `defmt::trace!` per transition in `step`      |
//!
//! A host `cargo build` / `cargo test` works with every feature: defmt needs its
//! linker script (`-C link-arg=-Tdefmt.x`) and a global logger only when a final
//! firmware binary that actually logs is linked.
//!
//! # How generated code picks up the features (for the code generator)
//!
//! A `#[cfg(feature = "defmt")]` written into generated code would test the *user's*
//! crate's features, not this crate's, and a `defmt::` path would need the user to
//! depend on defmt directly. So the features are decided here, in this crate, by
//! macros whose definition depends on this crate's features; generated code calls
//! them unconditionally, by absolute path:
//!
//! **`::detent::__derive_extras! { ITEM... }`**: wraps one or more items (the
//! `State`, `Event`, `Outputs` and `Machine` definitions, with their own attributes
//! and doc comments) and adds, per enabled feature:
//! - `defmt`: `#[derive(defmt::Format)]` with `#[defmt(crate = ...)]` pointing at
//!   this crate's re-export, so the user needs no `defmt` dependency;
//! - `serde`: `#[derive(serde::Serialize, serde::Deserialize)]` with
//!   `#[serde(crate = "::detent::__private::serde")]`.
//!
//! With neither feature the items come out unchanged. Example of generated code:
//!
//! ```
//! ::detent::__derive_extras! {
//!     /// The states of `BilgePump`.
//!     #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
//!     #[repr(u8)]
//!     pub enum State { Idle = 0, Pumping = 1 }
//!
//!     /// The outputs of `BilgePump`.
//!     #[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
//!     pub struct Outputs { pub pump: bool }
//! }
//! assert_eq!(State::Pumping as u8, 1);
//! ```
//!
//! **`::detent::__trace_transition!(MACHINE_NAME, from, event, to);`**: a statement
//! for `step` to emit once per taken transition. `MACHINE_NAME` is a string literal;
//! `from`, `event`, `to` are the `State`/`Event` values (their `defmt::Format`, which
//! `__derive_extras!` gives them, sends only the variant number over the wire). With
//! `defmt-trace` on it expands to
//! `defmt::trace!("{=istr}: {} --{}--> {}", intern!(MACHINE_NAME), from, event, to)`
//! (shown at runtime only when the firmware is built with `DEFMT_LOG=trace` or
//! finer); otherwise to a block that only borrows its arguments, so no
//! unused-variable warning appears and no code is generated.
//!
//! ```
//! # ::detent::__derive_extras! {
//! #     #[derive(Clone, Copy, Debug, PartialEq, Eq)] pub enum State { Idle, Pumping }
//! #     #[derive(Clone, Copy, Debug, PartialEq, Eq)] pub enum Event { FloatUp }
//! # }
//! fn on_transition(from: State, event: Event, to: State) {
//!     ::detent::__trace_transition!("BilgePump", from, event, to);
//! }
//! on_transition(State::Idle, Event::FloatUp, State::Pumping);
//! ```
//!
//! With `defmt` on, defmt's derive fills the never-called `Format::format` method
//! with `unreachable!()` (defmt calls `_format_tag`/`_format_data` instead), so a
//! scan of the whole crate's assembly finds a panic there; check panic-freedom from
//! the entry points (`step`, `restore`) instead, as `detent-tests`' harness does with
//! `NoStdReport::check_entry_points`.
//!
//! The expansions never contain `unsafe` written in the user's crate, so they work in
//! a `#![forbid(unsafe_code)]` crate. Both macros assume the runtime is reachable as
//! `::detent` (the serde attribute takes a string path, which cannot use `$crate`).
//! `__private` and the `__`-prefixed macros are for generated code only: they are
//! hidden from the docs and are not a stable interface for hand-written code.
#![no_std]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

// Lets this crate use its own macros (whose serde attribute names `::detent`).
extern crate self as detent;

mod error;
mod machine;
mod queue;

pub use detent_macros::{machine, machine_file};
pub use error::{InvalidState, Rejected};
pub use machine::StateMachine;
pub use queue::{Drain, EventQueue, EventReceiver, EventSender};

/// Re-exports for generated code; not a public interface.
#[doc(hidden)]
pub mod __private {
    #[cfg(feature = "defmt")]
    pub use defmt;
    #[cfg(feature = "serde")]
    pub use serde;
}

// `__derive_extras!` is a chain of two stages, each defined once per state of its
// feature: `__derive_extras` -> `__derive_defmt_stage` -> `__derive_serde_stage`.
// Each stage prepends its attributes (or nothing) and forwards the item.

/// Adds the feature-dependent derives to generated items (see the crate docs).
#[doc(hidden)]
#[macro_export]
macro_rules! __derive_extras {
    ($($item:item)*) => {
        $( $crate::__derive_defmt_stage! { $item } )*
    };
}

#[cfg(feature = "defmt")]
#[doc(hidden)]
#[macro_export]
macro_rules! __derive_defmt_stage {
    ($item:item) => {
        $crate::__derive_serde_stage! {
            #[derive($crate::__private::defmt::Format)]
            #[defmt(crate = $crate::__private::defmt)]
            $item
        }
    };
}

#[cfg(not(feature = "defmt"))]
#[doc(hidden)]
#[macro_export]
macro_rules! __derive_defmt_stage {
    ($item:item) => {
        $crate::__derive_serde_stage! { $item }
    };
}

#[cfg(feature = "serde")]
#[doc(hidden)]
#[macro_export]
macro_rules! __derive_serde_stage {
    ($item:item) => {
        #[derive($crate::__private::serde::Serialize, $crate::__private::serde::Deserialize)]
        #[serde(crate = "::detent::__private::serde")]
        $item
    };
}

#[cfg(not(feature = "serde"))]
#[doc(hidden)]
#[macro_export]
macro_rules! __derive_serde_stage {
    ($item:item) => {
        $item
    };
}

/// One trace line per transition under `defmt-trace` (see the crate docs).
#[cfg(feature = "defmt-trace")]
#[doc(hidden)]
#[macro_export]
macro_rules! __trace_transition {
    ($machine:literal, $from:expr, $event:expr, $to:expr $(,)?) => {{
        // defmt's macros expand to `defmt::...` paths: bring that name into this
        // block only, so the user's crate needs no defmt dependency of its own.
        use $crate::__private::defmt;
        defmt::trace!(
            "{=istr}: {} --{}--> {}",
            defmt::intern!($machine),
            $from,
            $event,
            $to
        );
    }};
}

/// One trace line per transition under `defmt-trace` (see the crate docs).
#[cfg(not(feature = "defmt-trace"))]
#[doc(hidden)]
#[macro_export]
macro_rules! __trace_transition {
    ($machine:literal, $from:expr, $event:expr, $to:expr $(,)?) => {{
        let _ = (&$from, &$event, &$to);
    }};
}
