//! forkmap's integration tests (one binary, so arrow/parquet link once).
//! Reference values come from `tests/reference/` (see make_reference.py) or from
//! `FORKMAP_REFERENCE_DIR` when the test command has regenerated them.

mod bad_input;
#[macro_use]
mod common;
mod contract;
mod costs;
mod curves;
mod curves_groups;
mod curves_reference;
mod curves_run;
mod curves_shape;
mod declare;
mod determinism;
mod end_to_end;
mod extend;
mod folds_prop;
mod importance;
mod intake_fuzz;
mod leak;
mod nested;
mod nested_fits;
mod null;
mod null_claims;
mod null_fixed;
mod null_shared;
mod numbers;
mod pools;
mod reference;
mod reference_ensembles;
mod refit;
mod report;
mod resume;
mod selection;
mod shards;
mod shards_derived;
mod starter;
