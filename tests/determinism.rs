//! Results are a pure function of config + data + seed, whatever the thread count.

use crate::common::{prepared, toy};
use forkmap::sweep::Sweep;
use std::sync::Mutex;

/// Every random stream the engine has: fold shuffles with repeats, forests, extremely
/// randomised trees, subsampled boosting; plus the stages that share work across specs.
const CFG: &str = toy_config!(
    "11",
    r#"[folds]
k = 4
repeats = 2
[choices]
transform = ["identity", "logit"]
fill = ["median", "knn"]
pool = ["all", "screen"]
scale = ["minmax"]
compress = ["none", "nmf", "pls"]
model = ["forest", "extra", "boost", "ridge"]
weighting = ["rows", "high"]
[grid.forest]
trees = [15]
[grid.extra]
trees = [15]
[grid.boost]
trees = [20]
subsample = [0.7]
[grid.nmf]
k = [3]
[grid.pls]
k = [2]
"#
);

/// Everything a spec's result holds, as bits: status, message, notes, every metric,
/// every prediction and every importance row.
#[derive(Debug, PartialEq, Eq, PartialOrd, Ord)]
struct Print {
    id: String,
    status: String,
    message: Option<String>,
    notes: Vec<String>,
    importance_failed: bool,
    scores: Vec<u64>,
    predictions: Vec<(u32, u16, u16, u64)>,
    importance: Vec<(String, String, String, u64, u64, u32, bool)>,
}

fn print_of(p: &forkmap::run::Prepared, r: &forkmap::sweep::SpecResult) -> Print {
    Print {
        id: p.space.specs[r.spec].id.clone(),
        status: r.status.to_string(),
        message: r.message.clone(),
        notes: r.notes.clone(),
        importance_failed: r.importance_failed,
        scores: r
            .scores
            .map(|s| s.columns().iter().map(|(_, v)| v.to_bits()).collect())
            .unwrap_or_default(),
        predictions: r
            .predictions
            .iter()
            .map(|q| (q.row, q.repeat, q.fold, q.value.to_bits()))
            .collect(),
        importance: r
            .importance
            .iter()
            .map(|i| {
                (
                    i.name.to_string(),
                    i.level.to_string(),
                    i.kind.to_string(),
                    i.importance.to_bits(),
                    i.spread.to_bits(),
                    i.rank,
                    i.in_pool,
                )
            })
            .collect(),
    }
}

/// The whole space without importances, then every fifth spec again with every
/// importance kind (permutation draws, groups, native; shared draws under each fill).
fn fingerprint(threads: usize) -> (Vec<Print>, Vec<Print>) {
    let p = prepared(CFG);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    let collect = |sweep: &Sweep| {
        let out = Mutex::new(Vec::new());
        pool.install(|| sweep.run(&|r| out.lock().unwrap().push(print_of(&p, &r))));
        let mut v = out.into_inner().unwrap();
        v.sort();
        v
    };
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let all = collect(&sweep);
    let some: Vec<usize> = (0..p.space.specs.len()).step_by(5).collect();
    let mut with_importance =
        Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, Some(&some)).unwrap();
    with_importance.importance = Some(forkmap::importance::ImportanceSection {
        repeats: 1,
        kinds: vec!["permutation".into(), "group".into(), "native".into()],
        within: None,
    });
    (all, collect(&with_importance))
}

#[test]
fn one_and_two_threads_give_identical_bits() {
    let (a, ai) = fingerprint(1);
    let (b, bi) = fingerprint(2);
    let n = prepared(CFG).space.specs.len();
    assert_eq!(a.len(), n);
    assert_eq!(ai.len(), n.div_ceil(5));
    assert!(a
        .iter()
        .all(|x| x.status == "ok" && !x.predictions.is_empty()));
    // Importances were computed and compared (not two empty lists).
    assert!(
        ai.iter().all(|x| !x.importance.is_empty()),
        "importances missing"
    );
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(&b).chain(ai.iter().zip(&bi)) {
        assert!(x == y, "threads 1 and 2 differ for spec {}", x.id);
    }
    assert_eq!(ai.len(), bi.len());
}

#[test]
fn spec_ids_are_stable_under_reordering() {
    let p = toy();
    let text =
        std::fs::read_to_string(crate::common::root().join("configs/toy-quick.toml")).unwrap();
    let edits = [
        (
            "fill = [\"median\", \"knn\"]",
            "fill = [\"knn\", \"median\"]",
        ),
        (
            "model = [\"ols\", \"ridge\", \"forest\", \"boost\"]",
            "model = [\"boost\", \"forest\", \"ridge\", \"ols\"]",
        ),
        ("alpha = [1.0, 10.0]", "alpha = [10, 1]"),
    ];
    let mut reordered = text.clone();
    for (from, to) in edits {
        assert_eq!(
            reordered.matches(from).count(),
            1,
            "the quick config still has `{from}`"
        );
        reordered = reordered.replace(from, to);
    }
    assert_ne!(text, reordered);
    let cfg =
        forkmap::config::Config::from_toml(&reordered, &crate::common::root().join("configs"), "t")
            .unwrap();
    let q = forkmap::run::prepare_config(cfg).unwrap();
    let mut a: Vec<&str> = p.space.specs.iter().map(|s| s.id.as_str()).collect();
    let mut b: Vec<&str> = q.space.specs.iter().map(|s| s.id.as_str()).collect();
    a.sort();
    b.sort();
    assert_eq!(a, b);
}

/// The id is the first 16 hex digits of sha256 of the canonical form. The expected value
/// was computed outside the project with Python's hashlib:
/// sha256(b"fill=mean;pool=core[0123abcd];scale=standardise;compress=pca(k=3);model=ridge(alpha=0.1);weighting=rows")
#[test]
fn spec_id_is_sha256_of_canonical_form() {
    use forkmap::space::{Choice, Spec};
    let c = |dim: &'static str, option: &str, params: Vec<(&'static str, f64)>| Choice {
        dim: forkmap::decl::Dim::parse(dim).expect("a dimension name"),
        option: option.into(),
        params,
        members: None,
        digest: None,
    };
    let mut pool = c("pool", "core", vec![]);
    pool.digest = Some("0123abcd".into());
    let spec = Spec::from_choices(vec![
        c("fill", "mean", vec![]),
        pool,
        c("scale", "standardise", vec![]),
        c("compress", "pca", vec![("k", 3.0)]),
        c("model", "ridge", vec![("alpha", 0.1)]),
        c("weighting", "rows", vec![]),
    ]);
    assert_eq!(spec.id, "d8e20b69e46fe893");
}
