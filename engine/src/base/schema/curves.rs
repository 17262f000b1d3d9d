//! Columns of the curves' tables ([`CURVES_DIR`](super::CURVES_DIR)`/NAME.parquet`), in
//! table order.

pub mod ice {
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    pub const UNIT: &str = "unit";
    pub const WAVE: &str = "wave";
    pub const GRID_INDEX: &str = "grid_index";
    pub const GRID_VALUE: &str = "grid_value";
    pub const PREDICTION: &str = "prediction";
    pub const CENTRED: &str = "centred";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        SPEC_ID, INDICATOR, UNIT, WAVE, GRID_INDEX, GRID_VALUE, PREDICTION, CENTRED,
    ];
}
pub mod pd {
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    pub const GRID_INDEX: &str = "grid_index";
    pub const GRID_VALUE: &str = "grid_value";
    pub const PD: &str = "pd";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[SPEC_ID, INDICATOR, GRID_INDEX, GRID_VALUE, PD];
}
pub mod breakpoints {
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    pub const DIRECTION: &str = "direction";
    pub const SHAPE: &str = "shape";
    pub const BREAKPOINT: &str = "breakpoint";
    pub const JUMP: &str = "jump";
    pub const COMPOSITION_LO: &str = "composition_lo";
    pub const COMPOSITION_HI: &str = "composition_hi";
    pub const COMPOSITION_DRAWS: &str = "composition_draws";
    pub const COMPOSITION_KEPT: &str = "composition_kept";
    pub const SLOPE_LEFT: &str = "slope_left";
    pub const SLOPE_RIGHT: &str = "slope_right";
    pub const SSE: &str = "sse";
    pub const BIC_LINE: &str = "bic_line";
    pub const BIC_HINGE: &str = "bic_hinge";
    pub const BIC_JUMP: &str = "bic_jump";
    pub const SAME_AS: &str = "same_as";
    pub const FLAT_TOLERANCE: &str = "flat_tolerance";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        SPEC_ID,
        INDICATOR,
        DIRECTION,
        SHAPE,
        BREAKPOINT,
        JUMP,
        COMPOSITION_LO,
        COMPOSITION_HI,
        COMPOSITION_DRAWS,
        COMPOSITION_KEPT,
        SLOPE_LEFT,
        SLOPE_RIGHT,
        SSE,
        BIC_LINE,
        BIC_HINGE,
        BIC_JUMP,
        SAME_AS,
        FLAT_TOLERANCE,
    ];
}
pub mod bands {
    pub const INDICATOR: &str = "indicator";
    pub const GRID_INDEX: &str = "grid_index";
    pub const GRID_VALUE: &str = "grid_value";
    pub const MEMBERS: &str = "members";
    pub const HOLDING: &str = "holding";
    pub const DISTINCT: &str = "distinct";
    pub const PD_MEDIAN: &str = "pd_median";
    pub const PD_LO: &str = "pd_lo";
    pub const PD_HI: &str = "pd_hi";
    pub const LEVEL: &str = "level";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        INDICATOR, GRID_INDEX, GRID_VALUE, MEMBERS, HOLDING, DISTINCT, PD_MEDIAN, PD_LO, PD_HI,
        LEVEL,
    ];
}
pub mod signs {
    pub const INDICATOR: &str = "indicator";
    pub const MEMBERS: &str = "members";
    pub const HOLDING: &str = "holding";
    pub const DISTINCT: &str = "distinct";
    pub const RISES: &str = "rises";
    pub const FALLS: &str = "falls";
    pub const FLAT: &str = "flat";
    pub const TURNS: &str = "turns";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        INDICATOR, MEMBERS, HOLDING, DISTINCT, RISES, FALLS, FLAT, TURNS,
    ];
}
pub mod observed {
    pub const INDICATOR: &str = "indicator";
    pub const UNIT: &str = "unit";
    pub const WAVE: &str = "wave";
    pub const VALUE: &str = "value";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[INDICATOR, UNIT, WAVE, VALUE];
}
pub mod clusters {
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    pub const UNIT: &str = "unit";
    pub const CLUSTER: &str = "cluster";
    pub const K: &str = "k";
    pub const SILHOUETTE: &str = "silhouette";
    pub const CLUSTER_SHAPE: &str = "cluster_shape";
    pub const CLUSTER_BREAKPOINT: &str = "cluster_breakpoint";
    pub const CLUSTER_JUMP: &str = "cluster_jump";
    pub const CLUSTER_SLOPE_LEFT: &str = "cluster_slope_left";
    pub const CLUSTER_SLOPE_RIGHT: &str = "cluster_slope_right";
    pub const DISTANCE: &str = "distance";
    pub const BOUND: &str = "bound";
    pub const DEPARTS: &str = "departs";
    pub const GAP: &str = "gap";
    pub const GAP_SE: &str = "gap_se";
    pub const GAP_NEXT: &str = "gap_next";
    pub const GAP_NEXT_SE: &str = "gap_next_se";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        SPEC_ID,
        INDICATOR,
        UNIT,
        CLUSTER,
        K,
        SILHOUETTE,
        CLUSTER_SHAPE,
        CLUSTER_BREAKPOINT,
        CLUSTER_JUMP,
        CLUSTER_SLOPE_LEFT,
        CLUSTER_SLOPE_RIGHT,
        DISTANCE,
        BOUND,
        DEPARTS,
        GAP,
        GAP_SE,
        GAP_NEXT,
        GAP_NEXT_SE,
    ];
}
