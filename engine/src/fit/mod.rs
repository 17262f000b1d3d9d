//! What is fitted inside a fold: outcome transforms, row weights, stages and models.

pub mod models;
pub mod stages;
pub mod transform;
pub mod weights;
