//! forkmap: map how a small panel's findings depend on the analysis choices made.
//!
//! Data flows one way: [`config`] -> [`space`] (specs with stable ids) -> [`sweep`] (a
//! stage tree over [`folds`], [`stages`] fitted in-fold and shared) -> [`models`] ->
//! [`sink`] (Parquet parts, atomic) -> [`results`] -> [`report`]. See DEVELOPERS.md for the code map and
//! the invariants.

pub mod config;
pub mod curves;
pub mod decl;
pub mod error;
pub mod folds;
pub mod gather;
pub mod importance;
pub mod manifest;
pub mod metrics;
pub mod models;
pub mod nested;
pub mod null;
pub mod panel;
pub mod plan;
pub mod progress;
pub mod refit;
pub mod report;
pub mod results;
pub mod resume;
pub mod run;
pub mod schema;
pub mod shard;
pub mod sink;
pub mod space;
pub mod stages;
pub mod starter;
pub mod streams;
pub mod sweep;
pub mod transform;
pub mod weights;

pub use error::{Error, FitError, Result};
