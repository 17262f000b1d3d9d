//! The report of a run (`forkmap map`): reads the run's tables through
//! [`crate::results::RunSet`] as a meta-analyst would, computes each section as a pure
//! function of those tables, and writes `report/` (Parquet tables, plots, one HTML page).
//! It never refits.

pub mod model;
