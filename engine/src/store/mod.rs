//! What a sweep leaves behind: Parquet parts written atomically, the manifest, resuming an
//! interrupted run, reading one or several runs as one.

pub mod manifest;
pub mod parts;
pub mod results;
pub mod resume;
pub mod sink;
