//! The permutation null shares the fits of stages that do not read the outcome across
//! draws (engine/src/sweep/cache.rs): its tables are bit-identical to refitting every
//! stage in every draw, stages that read the outcome (`pls`, `screen`) are refitted, and
//! the shared fits are really reused.

use crate::common::prepared;
use forkmap::null::run::{one_draw, NullInput};
use forkmap::progress::Progress;
use forkmap::sweep::cache::StageCache;
use std::sync::{Arc, Mutex};

const CONFIG: &str = toy_config!(
    "7",
    r#"[folds]
k = 4
[choices]
transform = ["identity", "logit"]
pool = ["all", "core", "screen"]
fill = ["median", "knn"]
scale = ["standardise"]
compress = ["none", "pca", "nmf", "pls"]
model = ["ridge", "tree"]
weighting = ["rows", "high"]
[pools]
core = ["inc_median_income", "cli_heating_degree_days", "prc_tariff_index", "hou_pre1950_share"]
[grid.screen]
k = [6]
[grid.knn]
k = [5]
[grid.pca]
k = [3]
[grid.nmf]
k = [3]
[grid.pls]
k = [2]
[grid.ridge]
alpha = [10]
"#
);

#[test]
fn shared_stage_fits_give_bit_identical_null_draws() {
    let p = prepared(CONFIG);
    let settings = forkmap::config::null::NullSection {
        draws: 3,
        specs: Some(60),
        ..Default::default()
    }
    .check("mae")
    .unwrap();
    let inp = NullInput {
        panel: &p.panel,
        space: &p.space,
        folds: &p.folds,
        seed: p.cfg.seed,
        settings,
        run_config: serde_json::Value::Null,
        data_sha256: String::new(),
        share_stages: true,
        repeats: 1,
        shard: None,
    };
    let subset = forkmap::null::run::sample(&inp);
    // The sample holds specs whose stages read the outcome, and specs whose do not.
    use forkmap::decl::Dim;
    let has = |dim: Dim, opt: &str| {
        subset
            .iter()
            .any(|&i| p.space.specs[i].choice(dim).option == opt)
    };
    assert!(has(Dim::Compress, "pls") && has(Dim::Pool, "screen") && has(Dim::Compress, "pca"));
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let progress = Mutex::new(Progress::new(0, true));
    let cache = Arc::new(StageCache::default());
    for d in 0..3 {
        let fresh = one_draw(&inp, &subset, d, &pool, &progress, None).unwrap();
        let shared = one_draw(&inp, &subset, d, &pool, &progress, Some(cache.clone())).unwrap();
        // Debug prints f64s so that they round-trip: equal text, equal bits.
        let (a, b) = (format!("{fresh:?}"), format!("{shared:?}"));
        let at = a.bytes().zip(b.bytes()).position(|(x, y)| x != y);
        assert!(
            a == b,
            "draw {d} differs at byte {at:?}: {:.200}",
            &a[at.unwrap_or(0)..]
        );
        assert!(fresh.0.n_ok > 10, "{:?}", fresh.0);
    }
    assert!(cache.stored() > 0);
    assert!(
        cache.hits() >= 2 * cache.stored(),
        "{} hits of {} fits",
        cache.hits(),
        cache.stored()
    );
}

#[test]
fn plan_says_the_null_estimate_is_an_upper_bound() {
    let settings = forkmap::config::null::NullSection {
        draws: 10,
        specs: Some(5),
        ..Default::default()
    }
    .check("rmse")
    .unwrap();
    let text = forkmap::null::plan::lines(&settings, 20, 4, 8.0, false);
    assert!(
        text.contains(
            "10 permutation draws x 5 specs (a seeded sample of 20) x 4 fits = 200 model fits"
        ),
        "{text}"
    );
    assert!(text.contains("ranked by rmse"), "{text}");
    // 8 s x 10 draws x 5/20 specs
    assert!(text.contains("estimated null time: 20"), "{text}");
    assert!(
        text.contains(
            "an upper bound: stages that do not read the outcome are fitted once per fold"
        ),
        "{text}"
    );
    assert!(!text.contains("permutation importances"), "{text}");
}
