//! Columns of the curves' tables ([`CURVES_DIR`](super::CURVES_DIR)`/NAME.parquet`), in
//! table order.

pub mod ice {
    /// A spec drawn in detail (the best).
    pub const SPEC_ID: &str = "spec_id";
    /// The indicator set to the grid value.
    pub const INDICATOR: &str = "indicator";
    /// The data row's unit.
    pub const UNIT: &str = "unit";
    /// Its wave (null without a wave column).
    pub const WAVE: &str = "wave";
    /// 0-based index of the grid point.
    pub const GRID_INDEX: &str = "grid_index";
    /// The grid value (an observed quantile of the indicator).
    pub const GRID_VALUE: &str = "grid_value";
    /// The row's prediction, back-transformed, with the indicator at the grid value.
    pub const PREDICTION: &str = "prediction";
    /// The prediction minus the row's mean prediction over the grid.
    pub const CENTRED: &str = "centred";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        SPEC_ID, INDICATOR, UNIT, WAVE, GRID_INDEX, GRID_VALUE, PREDICTION, CENTRED,
    ];
}
pub mod pd {
    /// A member spec.
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    pub const GRID_INDEX: &str = "grid_index";
    pub const GRID_VALUE: &str = "grid_value";
    /// Partial dependence: the mean prediction over rows at the grid value.
    pub const PD: &str = "pd";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[SPEC_ID, INDICATOR, GRID_INDEX, GRID_VALUE, PD];
}
pub mod breakpoints {
    /// A member spec.
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    /// rises, falls, flat (range within the flat tolerance), turns (a reversal beyond it), or absent (not in the pool).
    pub const DIRECTION: &str = "direction";
    /// The chosen shape: flat, line, hinge or jump (by BIC, a hinge or jump only when it beats the line by more than 6 and bends beyond the flat tolerance).
    pub const SHAPE: &str = "shape";
    /// Indicator value of the hinge or jump (null for flat or line).
    pub const BREAKPOINT: &str = "breakpoint";
    /// Size of the jump at the breakpoint, in outcome units (null unless a jump).
    pub const JUMP: &str = "jump";
    /// Lower end of the breakpoint's unit-composition range over unit resamples, model held fixed.
    pub const COMPOSITION_LO: &str = "composition_lo";
    /// Its upper end.
    pub const COMPOSITION_HI: &str = "composition_hi";
    /// Unit resamples drawn for that range.
    pub const COMPOSITION_DRAWS: &str = "composition_draws";
    /// Share of them keeping the shape.
    pub const COMPOSITION_KEPT: &str = "composition_kept";
    /// Slope left of the breakpoint (the line's slope for a line).
    pub const SLOPE_LEFT: &str = "slope_left";
    /// Slope right of the breakpoint.
    pub const SLOPE_RIGHT: &str = "slope_right";
    /// Sum of squared residuals of the chosen shape over the grid.
    pub const SSE: &str = "sse";
    /// BIC of a line.
    pub const BIC_LINE: &str = "bic_line";
    /// BIC of the best continuous hinge (the breakpoint counted).
    pub const BIC_HINGE: &str = "bic_hinge";
    /// BIC of the best jump (the breakpoint counted).
    pub const BIC_JUMP: &str = "bic_jump";
    /// Spec id of an earlier member with the same curve (1e-12 relative), null otherwise.
    pub const SAME_AS: &str = "same_as";
    /// `flat_share` x the outcome's sd: a PD whose range is within it is flat.
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
    /// Members of the good set.
    pub const MEMBERS: &str = "members";
    /// Of them, those whose pool holds the indicator.
    pub const HOLDING: &str = "holding";
    /// Distinct curves among those.
    pub const DISTINCT: &str = "distinct";
    /// Median PD at the grid value over the distinct curves.
    pub const PD_MEDIAN: &str = "pd_median";
    /// Lower end of the band (`level` range over the distinct curves).
    pub const PD_LO: &str = "pd_lo";
    /// Upper end.
    pub const PD_HI: &str = "pd_hi";
    /// Coverage of the band.
    pub const LEVEL: &str = "level";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        INDICATOR, GRID_INDEX, GRID_VALUE, MEMBERS, HOLDING, DISTINCT, PD_MEDIAN, PD_LO, PD_HI,
        LEVEL,
    ];
}
pub mod signs {
    pub const INDICATOR: &str = "indicator";
    /// Members of the good set.
    pub const MEMBERS: &str = "members";
    /// Of them, those whose pool holds the indicator.
    pub const HOLDING: &str = "holding";
    /// Distinct curves among those.
    pub const DISTINCT: &str = "distinct";
    /// Share of the distinct curves that rise.
    pub const RISES: &str = "rises";
    /// Share that fall.
    pub const FALLS: &str = "falls";
    /// Share that are flat.
    pub const FLAT: &str = "flat";
    /// Share that turn.
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
    /// The observed value (NaN when missing).
    pub const VALUE: &str = "value";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[INDICATOR, UNIT, WAVE, VALUE];
}
pub mod clusters {
    /// The spec whose unit curves are grouped (the best).
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    pub const UNIT: &str = "unit";
    /// The unit's subgroup (0-based) by k-means on centred curves.
    pub const CLUSTER: &str = "cluster";
    /// Number of subgroups chosen by the gap statistic.
    pub const K: &str = "k";
    /// Mean silhouette of the grouping (null for one group).
    pub const SILHOUETTE: &str = "silhouette";
    /// The subgroup's mean curve's shape (chosen as a member's).
    pub const CLUSTER_SHAPE: &str = "cluster_shape";
    /// Its breakpoint.
    pub const CLUSTER_BREAKPOINT: &str = "cluster_breakpoint";
    /// Its jump.
    pub const CLUSTER_JUMP: &str = "cluster_jump";
    /// Its slope left of the breakpoint.
    pub const CLUSTER_SLOPE_LEFT: &str = "cluster_slope_left";
    /// Its slope right.
    pub const CLUSTER_SLOPE_RIGHT: &str = "cluster_slope_right";
    /// RMS distance of the unit's centred curve from the mean centred curve.
    pub const DISTANCE: &str = "distance";
    /// Median + 3 x 1.4826 x MAD of those distances.
    pub const BOUND: &str = "bound";
    /// distance > bound.
    pub const DEPARTS: &str = "departs";
    /// Gap(k) of the chosen k (null when the units' curves do not differ).
    pub const GAP: &str = "gap";
    /// s(k).
    pub const GAP_SE: &str = "gap_se";
    /// Gap(k + 1).
    pub const GAP_NEXT: &str = "gap_next";
    /// s(k + 1).
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
