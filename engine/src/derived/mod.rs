//! What is computed from a finished sweep: the permutation null, the nested estimate, the
//! refit on unit subsamples, the curves and the report.

pub mod curves;
pub mod nested;
pub mod null;
pub mod refit;
pub mod report;
