//! Columns of the nested estimate's per-fold tables
//! ([`NESTED_DIR`](super::NESTED_DIR)`/fold-OOO.parquet`), in table order; between
//! `spec_id` and `inner_error` come one column per dimension (the chosen spec's options).

pub mod fold {
    pub const OUTER_FOLD: &str = "outer_fold";
    pub const SPEC_ID: &str = "spec_id";
    pub const INNER_ERROR: &str = "inner_error";
    pub const OUTER_ERROR: &str = "outer_error";
    pub const BASELINE_ERROR: &str = "baseline_error";
    pub const N_ROWS: &str = "n_rows";
    pub const N_UNITS: &str = "n_units";
    pub const N_SPECS: &str = "n_specs";
    pub const N_OK: &str = "n_ok";
    pub const METRIC: &str = "metric";
    pub const MESSAGE: &str = "message";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        OUTER_FOLD,
        SPEC_ID,
        INNER_ERROR,
        OUTER_ERROR,
        BASELINE_ERROR,
        N_ROWS,
        N_UNITS,
        N_SPECS,
        N_OK,
        METRIC,
        MESSAGE,
    ];
}
