//! Columns of the nested estimate's per-fold tables
//! ([`NESTED_DIR`](super::NESTED_DIR)`/fold-OOO.parquet`), in table order; between
//! `spec_id` and `inner_error` come one column per dimension (the chosen spec's options).

pub mod fold {
    /// Outer fold index (0-based).
    pub const OUTER_FOLD: &str = "outer_fold";
    /// The spec chosen inside the outer training units (lowest inner error, lowest id on ties); null when none succeeded.
    pub const SPEC_ID: &str = "spec_id";
    /// The chosen spec's error over the inner folds of the outer training units.
    pub const INNER_ERROR: &str = "inner_error";
    /// The chosen spec, refitted on the outer training units, scored on the held-out units.
    pub const OUTER_ERROR: &str = "outer_error";
    /// The training median of the outer training units, scored on the held-out units.
    pub const BASELINE_ERROR: &str = "baseline_error";
    /// Held-out rows.
    pub const N_ROWS: &str = "n_rows";
    /// Held-out units.
    pub const N_UNITS: &str = "n_units";
    /// Specs swept inside the outer training units.
    pub const N_SPECS: &str = "n_specs";
    /// Of them, ok.
    pub const N_OK: &str = "n_ok";
    /// Error metric (`mae`, `rmse`, `unit_mae`).
    pub const METRIC: &str = "metric";
    /// Why no spec could be chosen or scored (null when one was).
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
