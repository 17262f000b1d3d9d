//! Running: a whole run into its folder (with extension), gathering shards, the plan.

pub mod gather;
pub mod plan;
pub mod run;
