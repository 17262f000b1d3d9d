//! What comes in: the config, the panel (validated) and the fold plan.

pub mod config;
pub mod folds;
pub mod panel;
