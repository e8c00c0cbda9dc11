//! Maps and sets keyed by short ids, hashed with rustc-hash's Fx hasher: the default
//! SipHash (built against hostile keys in long-lived servers) dominates loading a study
//! or a file of ranked lists, and these maps live only for one load.

/// A map keyed by ids.
pub type FastMap<K, V> = rustc_hash::FxHashMap<K, V>;

/// A set of ids.
pub type FastSet<K> = rustc_hash::FxHashSet<K>;
