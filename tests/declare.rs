//! One way to declare an option: the test-only model family `probe` (cargo feature
//! `test-options`, `engine/src/fit/models/probe.rs`, one registration line in
//! `models::registry`) reaches every layer through its declaration alone: the config's
//! parameter checks, grid expansion and spec ids, its declared automatic exclusion, the
//! stage tree and the sweep, and `plan`'s listing.

use crate::common::{prepared, results};
use forkmap::sweep::Sweep;

const CFG: &str = r#"
seed = 3
[data]
file = "toy-panel/panel.csv"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
[folds]
k = 4
[choices]
fill = ["median"]
scale = ["standardise"]
compress = ["none", "pca"]
model = ["ols", "probe"]
[grid.pca]
k = [2]
[grid.probe]
shift = [0, 1.5]
"#;

#[test]
fn a_declared_option_runs_through_every_layer() {
    let p = prepared(CFG);
    let labels: Vec<String> = p.space.specs.iter().map(|s| s.label()).collect();
    // ols x {none, pca} + probe(shift 0, 1.5) x none: probe never follows pca.
    assert_eq!(p.space.specs.len(), 4, "{labels:?}");
    let probes: Vec<_> = p
        .space
        .specs
        .iter()
        .enumerate()
        .filter(|(_, s)| s.choice(forkmap::decl::Dim::Model).option == "probe")
        .collect();
    assert_eq!(probes.len(), 2);
    assert!(probes
        .iter()
        .all(|(_, s)| s.choice(forkmap::decl::Dim::Compress).option == "none"));
    assert!(
        p.space.exclusion_rules.iter().any(|r| r
            == "model in [probe] and compress in [pca] (automatic: a test of declared exclusions)"),
        "{:?}",
        p.space.exclusion_rules
    );
    // The sweep fits it on each fold's training rows: every prediction is that fold's
    // training mean plus the shift (row weights are 1).
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let res = results(&sweep);
    for (si, spec) in &probes {
        let shift = spec
            .choice(forkmap::decl::Dim::Model)
            .param("shift")
            .unwrap();
        let r = &res[*si];
        assert_eq!(r.status, forkmap::error::Status::Ok, "{:?}", r.message);
        assert_eq!(r.predictions.len(), p.panel.y.len() * p.folds.repeats);
        for pr in &r.predictions {
            let fold = p
                .folds
                .folds
                .iter()
                .find(|f| f.repeat == pr.repeat as usize && f.index == pr.fold as usize)
                .unwrap();
            let mean =
                fold.train.iter().map(|&i| p.panel.y[i]).sum::<f64>() / fold.train.len() as f64;
            assert!(
                (pr.value - (mean + shift)).abs() < 1e-9,
                "row {}: {} vs {}",
                pr.row,
                pr.value,
                mean + shift
            );
        }
    }
    // plan lists the family with its declared parameter.
    let text = forkmap::plan::plan(&p, 1, false).text;
    assert!(text.contains("probe"), "{text}");
}

#[test]
fn a_declared_parameter_is_checked_and_named() {
    let bad = CFG.replace("shift = [0, 1.5]", "shift = [2e6]");
    let cfg = forkmap::config::Config::from_toml(&bad, &crate::common::root(), "<test>").unwrap();
    let err = forkmap::run::prepare_config(cfg)
        .err()
        .expect("refused")
        .to_string();
    assert!(err.contains("probe") && err.contains("shift"), "{err}");
}
