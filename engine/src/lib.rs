//! forkmap: map how a small panel's findings depend on the analysis choices made.
//!
//! Data flows one way: [`config`] -> [`space`] (specs with stable ids) -> [`sweep`] (a
//! stage tree over [`folds`], [`stages`] fitted in-fold and shared) -> [`models`] ->
//! [`sink`] (Parquet parts, atomic) -> [`results`] -> [`report`]. See DEVELOPERS.md for the code map and
//! the invariants.

// Folders in the order data flows, bottom first: a folder imports only from folders
// before it (tests/python/module_graph.py checks it).
pub mod base;
pub mod choices;
pub mod derived;
pub mod fit;
pub mod intake;
pub mod runs;
pub mod starter;
pub mod store;
pub mod sweep;

// Every module under its short path (`crate::panel`, `forkmap::report`, ...).
pub use base::{decl, error, metrics, progress, schema, streams};
pub use choices::{shard, space};
pub use derived::{curves, nested, null, refit, report};
pub use fit::{models, stages, transform, weights};
pub use intake::{config, folds, panel};
pub use runs::{gather, plan, run};
pub use store::{manifest, results, resume, sink};
pub use sweep::importance;

pub use error::{Error, FitError, Result};
