//! The compiler's hash tables: `rustc-hash`'s Fx hasher (the fast non-cryptographic
//! hasher rustc uses for its own tables) under the names the compiler uses, so hot
//! tables (BDD nodes, name lookups, interning, the Moore baseline) are not dominated by
//! SipHash. Not resistant to chosen collisions, which a compiler reading its own user's
//! specs does not need.

/// The `BuildHasher` of [`FxMap`] and [`FxSet`].
pub use rustc_hash::FxBuildHasher as FastHash;
/// A `HashMap` with [`FastHash`] (`FxMap::default()` makes one).
pub use rustc_hash::FxHashMap as FxMap;
/// A `HashSet` with [`FastHash`].
pub use rustc_hash::FxHashSet as FxSet;
