//! Every random stream of the engine in one place. A stream is a fixed number mixed into
//! the run seed with [`mix`]; each random step (a fold shuffle, the spec sample, the
//! permutation draws, the report's unit resamples, ...) draws from its own stream, so
//! adding a random step never shifts another's draws, and results stay a pure function of
//! config + data + seed whatever the thread count. The numbers are part of every result:
//! never change one (the fingerprints test would catch it).

/// Mix a run seed with a stream number (SplitMix64 finaliser).
pub fn mix(seed: u64, stream: u64) -> u64 {
    let mut z = seed ^ stream.wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// Grouped K-fold shuffles: repeat `r` draws from `FOLD_SHUFFLE + r`.
pub const FOLD_SHUFFLE: u64 = 0xF01D;
/// The seeded sample of the choice space (`[sample]`).
pub const SPEC_SAMPLE: u64 = 0x5A4D_504C;
/// The specs `plan` times to estimate the run's cost.
pub const PLAN_TIMING: u64 = 0x0091_20BE;
/// Permutation-importance draws (shared by every spec: they depend on the seed, the fold,
/// the indicator and the repeat, never on the spec).
pub const PERMUTATION_DRAWS: u64 = 0x5045_524d_5554_4531;
/// The report's bootstrap over units.
pub const REPORT_RESAMPLES: u64 = 0x4d41_505f_424f_4f54;
/// The nested estimate's outer folds (`[nested]`).
pub const NESTED_OUTER: u64 = 0x4e45_5354_4f55_5445;
/// The nested estimate's inner folds: outer fold `o` draws from `mix(NESTED_INNER, o)`.
pub const NESTED_INNER: u64 = 0x4e45_5354_494e_4e45;
/// The nested estimate's spec sample.
pub const NESTED_SAMPLE: u64 = 0x4e45_5354_5341_4d50;
/// The permutation null's draws: draw `d` is seeded by `mix(mix(seed, NULL_DRAWS), d)`.
pub const NULL_DRAWS: u64 = 0x4e75_6c6c_4472_6177;
/// The permutation null's spec sample.
pub const NULL_SAMPLE: u64 = 0x4e75_6c6c_5370_6563;
/// The curves' unit bootstrap of a breakpoint.
pub const CURVE_BOOTSTRAP: u64 = 0x4355_5256_4553_4254;
/// The curves' k-means starts: start `s` for k clusters draws from
/// `mix(mix(seed, CURVE_KMEANS), k << 16 | s)`.
pub const CURVE_KMEANS: u64 = 0x4355_5256_4b4d_4e53;
/// The gap statistic's reference draws (uniform over the principal-component box of the
/// unit curves): draw `b` is seeded by `mix(mix(seed, CURVE_GAP_REFERENCE), b)`.
pub const CURVE_GAP_REFERENCE: u64 = 0x4355_5256_4741_5052;
/// The refit's unit subsamples (`[refit]`): subsample `r` is seeded by
/// `mix(mix(seed, REFIT_UNITS), r)`.
pub const REFIT_UNITS: u64 = 0x5245_4649_5455_4e49;
/// The refit's folds on subsample `r`: `mix(mix(seed, REFIT_FOLDS), r)`.
pub const REFIT_FOLDS: u64 = 0x5245_4649_5446_4f4c;
