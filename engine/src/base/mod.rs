//! The bottom of the graph: declarations, errors, names (schema), random streams, metrics
//! and progress. Imports nothing from the folders above it.

pub mod decl;
pub mod error;
pub mod metrics;
pub mod progress;
pub mod schema;
pub mod streams;
