//! The report in memory: what the analysis sections compute and what the renderer (HTML
//! page, SVG plots) and the Parquet writer consume. Plain vectors and strings only, so a
//! renderer needs nothing but this file.
//!
//! Conventions: `dimension` is a name of `space::DIMENSIONS`; `choice` is a dimension's
//! option with its parameters (`ridge(alpha=1)`), `option` the option alone (`ridge`).
//! Errors are "lower is better" (the report's metric is an error: mae, rmse or unit_mae).
//! Ranks are 1 = most important. Shares are in [0, 1].

pub use crate::config::map::GOOD_DEFINITIONS;

/// The whole report.
#[derive(Debug, Clone, Default)]
pub struct Report {
    pub meta: Meta,
    /// Plain sentences for the top of the page and the terminal.
    pub headline: Vec<String>,
    /// The cautions, one paragraph each.
    pub cautions: Vec<String>,
    /// Dimensions that vary in the run (more than one choice among ok specs), in registry
    /// order, with their choices; `CurvePoint::choices` indexes into these.
    pub dimensions: Vec<DimensionChoices>,
    pub curve: Vec<CurvePoint>,
    pub error_by_choice: Vec<ChoiceSummary>,
    pub error_by_param: Vec<ParamSummary>,
    pub error_shares: Vec<Share>,
    pub rank_by_choice: Vec<RankByChoice>,
    pub rank_shares: Vec<RankShare>,
    /// One per definition (GOOD_DEFINITIONS order).
    pub good_sets: Vec<GoodSet>,
    pub good_makeup: Vec<GoodMakeup>,
    pub importance: Vec<ImportanceSummary>,
    pub rank_counts: Vec<RankCount>,
    /// One per (level, kind) with at least two good members holding that kind.
    pub agreement: Vec<Agreement>,
    pub conclusions: Vec<Conclusion>,
    pub stability: Vec<Stability>,
    /// How often each spec is the best over the resamples (specs best at least once).
    pub best_frequency: Vec<BestFrequency>,
    /// The curves of RUN_DIR/curves/ when the run has them.
    pub shape: Option<super::shape::Shape>,
    /// The nested estimate of choosing the best (RUN_DIR/nested), when the run has one.
    pub nested: Option<super::nested::NestedReport>,
    /// The permutation null, when the run has one (`report::null`).
    pub null: Option<super::null::NullReport>,
    /// The refit of the top N specs on unit subsamples (RUN_DIR/refit), when the run has
    /// one (`report::refit`).
    pub refit: Option<super::refit::RefitReport>,
}

/// Settings and provenance.
#[derive(Debug, Clone, Default)]
pub struct Meta {
    /// Run directories read.
    pub runs: Vec<String>,
    /// The (first) run's manifest, pretty JSON.
    pub manifest_json: String,
    /// Completeness lines (as `forkmap check` prints them) and warnings.
    pub notes: Vec<String>,
    pub metric: String,
    pub top_k: usize,
    /// The good-set definition used for the sections that need one good set.
    pub good: String,
    pub ratio_eps: f64,
    /// The absolute margin used (from the config, or the default: the bootstrap standard
    /// error of the best spec's error).
    pub margin: f64,
    /// Whether `margin` was the default.
    pub margin_default: bool,
    pub level: f64,
    pub resamples: usize,
    pub seed: u64,
    pub specs_total: usize,
    pub specs_ok: usize,
    pub units: usize,
    pub rows: usize,
    /// Best spec and its error.
    pub best_spec: String,
    pub best_error: f64,
    pub median_error: f64,
    /// Importance kinds present, as (level, kind), e.g. ("indicator", "permutation").
    pub kinds: Vec<(String, String)>,
    /// Seconds spent building the report.
    pub seconds: f64,
}

#[derive(Debug, Clone, Default)]
pub struct DimensionChoices {
    pub dimension: String,
    pub choices: Vec<String>,
}

/// One ok spec on the specification curve (curve is sorted by error, best first).
#[derive(Debug, Clone, Default)]
pub struct CurvePoint {
    pub spec_id: String,
    /// 1 = best.
    pub position: usize,
    pub error: f64,
    /// Bootstrap percentile interval over units (Meta::level, Meta::resamples).
    pub lower: f64,
    pub upper: f64,
    /// Index into `Report::dimensions[d].choices`, one per varying dimension.
    pub choices: Vec<usize>,
    /// Membership in each good set (GOOD_DEFINITIONS order).
    pub good: [bool; 3],
}

/// Five-number summary of a set of values.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Spread {
    pub n: usize,
    pub min: f64,
    pub q1: f64,
    pub median: f64,
    pub q3: f64,
    pub max: f64,
}

/// The error of the specs taking one choice (the other dimensions varying).
#[derive(Debug, Clone, Default)]
pub struct ChoiceSummary {
    pub dimension: String,
    /// Option with parameters.
    pub choice: String,
    pub error: Spread,
}

/// The error of the specs taking one value of one option's parameter.
#[derive(Debug, Clone, Default)]
pub struct ParamSummary {
    pub option: String,
    pub param: String,
    pub value: f64,
    pub error: Spread,
}

/// A dimension's LMG (Shapley) share of the R^2 of the error on all dimensions.
#[derive(Debug, Clone, Default)]
pub struct Share {
    pub dimension: String,
    /// The dimension's LMG part of R^2 (the parts sum to `r2_total`).
    pub lmg: f64,
    /// lmg / r2_total.
    pub share: f64,
    /// R^2 of the model with every varying dimension.
    pub r2_total: f64,
    /// R^2 of the dimension alone.
    pub r2_alone: f64,
}

/// An indicator's (or group's) rank among the specs taking one choice.
#[derive(Debug, Clone, Default)]
pub struct RankByChoice {
    pub level: String,
    pub kind: String,
    pub name: String,
    pub dimension: String,
    pub choice: String,
    pub n: usize,
    pub median_rank: f64,
    pub share_top_k: f64,
}

/// A dimension's LMG share of the R^2 of one name's rank.
#[derive(Debug, Clone, Default)]
pub struct RankShare {
    pub level: String,
    pub kind: String,
    pub name: String,
    pub dimension: String,
    pub lmg: f64,
    pub share: f64,
    pub r2_total: f64,
}

/// One good-set definition.
#[derive(Debug, Clone, Default)]
pub struct GoodSet {
    pub definition: String,
    /// Plain statement of the rule, e.g. "mae <= 1.05 x best (0.4213)".
    pub rule: String,
    /// Error threshold (NaN for `paired`, which has none).
    pub threshold: f64,
    pub size: usize,
    /// Distinct fits among the members ([`super::data::RunTables::fit_classes`]).
    pub distinct_fits: usize,
    pub share_of_ok: f64,
}

/// How many members of each good set take one choice.
#[derive(Debug, Clone, Default)]
pub struct GoodMakeup {
    pub definition: String,
    pub dimension: String,
    pub choice: String,
    pub in_good: usize,
    pub in_ok: usize,
    /// in_good / good set size.
    pub share_of_good: f64,
}

/// One name's importance over the chosen good set (members holding that kind).
#[derive(Debug, Clone, Default)]
pub struct ImportanceSummary {
    pub level: String,
    pub kind: String,
    pub name: String,
    /// Importance values over the good members whose pool holds the name; min and max
    /// are the empirical range (model class reliance, Fisher, Rudin & Dominici 2019). A
    /// member that left the name out of its pool says nothing about reliance on it.
    pub importance: Spread,
    /// Good members whose pool left the name out (not in `importance`).
    pub out_of_pool: usize,
    pub median_rank: f64,
    pub best_rank: u32,
    pub worst_rank: u32,
    pub share_top_k: f64,
    /// Same share over every ok spec holding the kind.
    pub share_top_k_all: f64,
}

/// How many good members give a name a rank.
#[derive(Debug, Clone, Default)]
pub struct RankCount {
    pub level: String,
    pub kind: String,
    pub name: String,
    pub rank: u32,
    pub count: usize,
}

/// Kendall's tau-b between good members' importance orderings.
#[derive(Debug, Clone, Default)]
pub struct Agreement {
    pub level: String,
    pub kind: String,
    /// Member spec ids (the best ones by error when the good set is larger than the cap).
    pub members: Vec<String>,
    /// Whether the member list was capped.
    pub capped: bool,
    pub mean: f64,
    pub min: f64,
    /// members x members, row-major, 1 on the diagonal.
    pub matrix: Vec<f64>,
}

/// A statement and its support.
#[derive(Debug, Clone, Default)]
pub struct Conclusion {
    /// "auto" or "claim".
    pub source: String,
    pub statement: String,
    pub level: String,
    pub kind: String,
    pub support_all: f64,
    pub n_all: usize,
    pub support_good: f64,
    pub n_good: usize,
    /// The choice whose removal changes the support over all ok specs most, and the
    /// support without it ("" and NaN when no removal changes it).
    pub pivot_dimension: String,
    pub pivot_choice: String,
    pub support_without: f64,
}

/// How often a name stays top-k when units are resampled.
#[derive(Debug, Clone, Default)]
pub struct Stability {
    pub level: String,
    pub kind: String,
    pub name: String,
    /// Mean over resamples of the share of that resample's good set where it is top-k.
    pub mean_share_top_k: f64,
    /// Share of resamples where it is top-k in at least half of the good set.
    pub share_majority: f64,
    /// Share of resamples where it is top-k in that resample's best spec.
    pub share_in_best: f64,
}

#[derive(Debug, Clone, Default)]
pub struct BestFrequency {
    pub spec_id: String,
    pub share: f64,
}
