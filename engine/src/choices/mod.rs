//! The choice space: specs with stable ids, their exclusions, the prepared run inputs and
//! the cost-balanced shard split.

pub mod prepared;
pub mod shard;
pub mod space;
