//! Shards: `--shard I/N` splits the specs deterministically; `check` reports a shard set's
//! completeness; `gather` joins a complete set into exactly the single-machine run (all four
//! tables, bit for bit, seconds columns aside), including the deferred permutation pass.

use crate::common::root;
use crate::resume::fingerprint;
use std::path::{Path, PathBuf};

fn config(dir: &Path, seed: u64) -> PathBuf {
    let text = format!(
        r#"
seed = {seed}
[data]
file = "{root}/toy-panel/panel.csv"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
codebook = "{root}/toy-panel/codebook.csv"
[folds]
k = 4
[choices]
pool = ["all", "core"]
compress = ["none", "pca"]
model = ["ridge", "tree", "forest", "boost"]
weighting = ["rows", "high"]
[pools]
core = ["inc_median_income", "cli_heating_degree_days", "prc_tariff_index", "hou_pre1950_share"]
[grid.pca]
k = [3]
[grid.ridge]
alpha = [1, 10]
[grid.forest]
trees = [30]
[grid.boost]
trees = [30]
[importance]
repeats = 1
kinds = ["permutation", "group", "native"]
within = 0.03
[output]
batch_specs = 3
"#,
        root = root().display()
    );
    let path = dir.join(format!("shards-{seed}.toml"));
    std::fs::write(&path, text).unwrap();
    path
}

use crate::common::{forkmap, ok, run_cli as run};

fn spec_ids(out: &Path) -> Vec<String> {
    let mut ids: Vec<String> = fingerprint(out)[0]
        .iter()
        .map(|r| r.split('|').next().unwrap().to_string())
        .collect();
    ids.sort();
    ids
}

#[test]
fn two_and_three_shards_gather_into_the_single_run() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), 11);
    let single = tmp.path().join("single");
    ok(&run(&cfg, &single, &[]));
    let want = fingerprint(&single);
    let all_ids = spec_ids(&single);
    assert!(all_ids.len() >= 40, "{} specs", all_ids.len());
    // The deferred permutation pass ran: some permutation rows, not for every spec.
    let perm = want[3]
        .iter()
        .filter(|r| r.contains("|permutation|"))
        .count();
    assert!(perm > 0, "no permutation importances in the single run");

    for n in [2usize, 3] {
        let base = tmp.path().join(format!("split{n}"));
        let mut seen: Vec<String> = Vec::new();
        for i in 1..=n {
            let dir = base.join(format!("shard-{i}"));
            ok(&run(&cfg, &dir, &["--shard", &format!("{i}/{n}")]));
            let ids = spec_ids(&dir);
            assert!(!ids.is_empty(), "shard {i}/{n} is empty");
            seen.extend(ids);
        }
        seen.sort();
        assert_eq!(seen, all_ids, "the {n} shards do not partition the specs");
        let report = ok(&forkmap(&["check".as_ref(), base.as_os_str()]));
        assert!(
            report.contains("complete") && !report.contains("incomplete"),
            "{report}"
        );
        assert!(report.contains("pending"), "{report}");
        let gathered = tmp.path().join(format!("gathered{n}"));
        ok(&forkmap(&[
            "gather".as_ref(),
            base.as_os_str(),
            "--out".as_ref(),
            gathered.as_os_str(),
            "--quiet".as_ref(),
        ]));
        let got = fingerprint(&gathered);
        for (t, (g, w)) in ["specs", "predictions", "loadings", "importance"]
            .iter()
            .zip(got.iter().zip(&want))
        {
            assert_eq!(g.len(), w.len(), "{n} shards: {t} row count");
            assert!(g == w, "{n} shards: {t} differs from the single run");
        }
        let m: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(gathered.join("manifest.json")).unwrap())
                .unwrap();
        assert_eq!(m["status"], "complete");
        assert_eq!(m["shard"], serde_json::Value::Null);
        assert_eq!(m["gathered_from"].as_array().unwrap().len(), n);
        // The gathered run is itself a complete run.
        let report = ok(&forkmap(&["check".as_ref(), gathered.as_os_str()]));
        assert!(report.contains("whole space"), "{report}");
    }
}

#[test]
fn incomplete_duplicated_and_foreign_shard_sets_are_reported_and_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), 12);
    let base = tmp.path().join("shards");
    for i in [1, 3] {
        ok(&run(
            &cfg,
            &base.join(format!("s{i}")),
            &["--shard", &format!("{i}/3")],
        ));
    }
    // Shard 2 is missing.
    let o = forkmap(&["check".as_ref(), base.as_os_str()]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains("missing    shard 2/3") && text.contains("incomplete"),
        "{text}"
    );
    let gathered = tmp.path().join("gathered");
    let o = forkmap(&[
        "gather".as_ref(),
        base.as_os_str(),
        "--out".as_ref(),
        gathered.as_os_str(),
    ]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("not complete") && err.contains("shard 2/3"),
        "{err}"
    );
    assert!(!gathered.exists(), "a refused gather wrote its output");
    assert!(
        std::fs::read_dir(tmp.path()).unwrap().all(|e| !e
            .unwrap()
            .file_name()
            .to_string_lossy()
            .contains("gather")),
        "a refused gather left a temporary folder"
    );

    // Shard 1 run twice into two folders: its specs are duplicated.
    ok(&run(&cfg, &base.join("s2"), &["--shard", "2/3"]));
    ok(&run(&cfg, &base.join("s1-again"), &["--shard", "1/3"]));
    let o = forkmap(&["check".as_ref(), base.as_os_str()]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains("duplicated") && text.contains("s1-again"),
        "{text}"
    );
    // Each spec is counted once, however many directories hold it.
    let line = text.lines().find(|l| l.starts_with("specs ")).unwrap();
    let nums: Vec<usize> = line
        .split(|c: char| !c.is_ascii_digit())
        .filter_map(|t| t.parse().ok())
        .collect();
    assert_eq!(nums.len(), 4, "{line}");
    assert!(nums[0] == nums[1] && nums[2] + nums[3] == nums[1], "{line}");
    std::fs::remove_dir_all(base.join("s1-again")).unwrap();
    let report = ok(&forkmap(&["check".as_ref(), base.as_os_str()]));
    assert!(report.ends_with("complete\n"), "{report}");

    // A shard of another config is not part of this run.
    let other = config(tmp.path(), 13);
    let foreign = tmp.path().join("foreign");
    ok(&run(&other, &foreign, &["--shard", "2/3"]));
    let o = forkmap(&[
        "check".as_ref(),
        base.join("s1").as_os_str(),
        foreign.as_os_str(),
    ]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("config differs") && err.contains("foreign"),
        "{err}"
    );

    // Resuming a shard folder as another shard is refused.
    let o = run(&cfg, &base.join("s1"), &["--shard", "2/3"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("shard (1/3, this is 2/3)"), "{err}");
    // Bad shard arguments.
    for bad in ["0/3", "4/3", "two"] {
        let o = run(&cfg, &tmp.path().join("bad"), &["--shard", bad]);
        assert_eq!(o.status.code(), Some(2), "--shard {bad}");
        assert!(!tmp.path().join("bad").exists());
    }
}

/// The split is balanced by expected cost and is a pure function of the spec list: the
/// same on every call, whatever the order the config lists its options in.
#[test]
fn shards_are_balanced_by_expected_cost_and_order_free() {
    let p = forkmap::run::prepare(&root().join("configs/toy-quick.toml")).unwrap();
    let costs: Vec<f64> = p
        .space
        .specs
        .iter()
        .map(|s| forkmap::shard::spec_cost(s, &p.panel))
        .collect();
    for n in [2usize, 3, 5, 8] {
        let owner = forkmap::shard::owners(&p.space, &p.panel, n);
        assert_eq!(owner, forkmap::shard::owners(&p.space, &p.panel, n));
        let mut load = vec![0.0; n];
        for (i, &o) in owner.iter().enumerate() {
            load[o] += costs[i];
        }
        let mean = load.iter().sum::<f64>() / n as f64;
        let max = load.iter().cloned().fold(0.0, f64::max);
        let biggest = costs.iter().cloned().fold(0.0, f64::max);
        // LPT: the fullest shard exceeds the mean by at most one spec's cost.
        assert!(max <= mean + biggest + 1e-9, "{n} shards: {load:?}");
        assert!(max / mean < 1.05, "{n} shards: max/mean = {}", max / mean);
    }
    // Reversed option order in the config: same specs, so the same split by spec id.
    let text = std::fs::read_to_string(root().join("configs/toy-quick.toml")).unwrap();
    let tmp = tempfile::tempdir().unwrap();
    let reordered = text.replace(
        "model = [\"ols\", \"ridge\", \"forest\", \"boost\"]",
        "model = [\"boost\", \"forest\", \"ridge\", \"ols\"]",
    );
    assert_ne!(
        reordered, text,
        "the config's model line changed: update this test"
    );
    let cfg = tmp.path().join("reordered.toml");
    std::fs::write(
        &cfg,
        reordered.replace(
            "../toy-panel",
            &root().join("toy-panel").display().to_string(),
        ),
    )
    .unwrap();
    let q = forkmap::run::prepare(&cfg).unwrap();
    let by_id = |p: &forkmap::run::Prepared| {
        let owner = forkmap::shard::owners(&p.space, &p.panel, 3);
        assert_eq!(owner.len(), p.space.specs.len());
        let mut v: Vec<(String, usize)> = p
            .space
            .specs
            .iter()
            .zip(owner)
            .map(|(s, o)| (s.id.clone(), o))
            .collect();
        v.sort();
        v
    };
    assert_eq!(by_id(&p), by_id(&q));
}
