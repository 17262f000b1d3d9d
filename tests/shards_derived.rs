//! Shards with `[null]` and `[nested]`: each shard runs its share of the null's draws and
//! the nested estimate's outer folds (dealt after its specs); `check` names what a shard
//! lacks; `gather` joins them into the files a whole-space run writes, byte for byte, and
//! refuses a missing draw or fold and shards of different `[null]`/`[nested]` settings,
//! naming them and writing nothing. A shard killed mid-null resumes to the same files.

use crate::common::{files_in, forkmap, ok, run_cli, spawn_run};
use std::path::{Path, PathBuf};
use std::process::Output;

const NULL_NESTED: &str =
    "[null]\ndraws = 7\nspecs = 6\ntop_k = 2\n[nested]\nouter_folds = 3\nspecs = 5\n";

fn config(dir: &Path, name: &str, tail: &str) -> PathBuf {
    crate::null::config(dir, name, tail)
}

/// Every file under `dir/null` and `dir/nested` (relative path, bytes), sorted, but the
/// null's manifest (its seconds differ), which is returned parsed without them.
fn derived_files(dir: &Path) -> (Vec<(String, Vec<u8>)>, serde_json::Value) {
    let mut out = Vec::new();
    let mut stack = vec![dir.join("null"), dir.join("nested")];
    while let Some(d) = stack.pop() {
        let Ok(entries) = std::fs::read_dir(&d) else {
            continue; // no nested/ without [nested]
        };
        for e in entries {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                let rel = p.strip_prefix(dir).unwrap().display().to_string();
                out.push((rel, std::fs::read(&p).unwrap()));
            }
        }
    }
    out.sort();
    let at = out
        .iter()
        .position(|(n, _)| n == "null/manifest.json")
        .expect("a null manifest");
    let (_, bytes) = out.remove(at);
    let mut m: serde_json::Value = serde_json::from_slice(&bytes).unwrap();
    let o = m.as_object_mut().unwrap();
    o.remove("seconds_this_invocation");
    o.remove("gathered");
    (out, m)
}

fn manifest(dir: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(dir.join("manifest.json")).unwrap()).unwrap()
}

fn gather(shards: &Path, out: &Path) -> Output {
    forkmap(&[
        "gather".as_ref(),
        shards.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--quiet".as_ref(),
    ])
}

/// Nothing of a refused gather is left beside `out`.
fn wrote_nothing(out: &Path) {
    assert!(!out.exists(), "a refused gather wrote {}", out.display());
    let parent = out.parent().unwrap();
    assert!(
        std::fs::read_dir(parent).unwrap().all(|e| !e
            .unwrap()
            .file_name()
            .to_string_lossy()
            .contains("gather")),
        "a refused gather left a temporary folder"
    );
}

#[test]
fn shards_run_null_and_nested_and_gather_into_the_whole_runs_files() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", NULL_NESTED);
    let whole = tmp.path().join("whole");
    ok(&run_cli(&cfg, &whole, &["--no-map", "--no-curves"]));
    let (want, want_manifest) = derived_files(&whole);
    assert_eq!(
        want.iter()
            .filter(|(n, _)| n.starts_with("null/draws/"))
            .count(),
        7
    );
    assert_eq!(
        want.iter()
            .filter(|(n, _)| n.starts_with("nested/fold-"))
            .count(),
        3
    );
    for n in [2usize, 3] {
        let base = tmp.path().join(format!("split{n}"));
        let mut draws: Vec<u64> = Vec::new();
        let mut folds: Vec<u64> = Vec::new();
        for i in 1..=n {
            let dir = base.join(format!("shard-{i}"));
            let text = ok(&run_cli(&cfg, &dir, &["--shard", &format!("{i}/{n}")]));
            assert!(
                text.contains(&format!("null       shard {i}/{n}: ")),
                "{text}"
            );
            assert!(
                text.contains(&format!("nested     shard {i}/{n}: ")),
                "{text}"
            );
            let m = manifest(&dir);
            let mine: Vec<u64> = serde_json::from_value(m["shard_draws"].clone()).unwrap();
            let theirs: Vec<u64> = serde_json::from_value(m["shard_folds"].clone()).unwrap();
            // The shard holds exactly its draws and folds.
            assert_eq!(
                files_in(&dir.join("null/draws"), |f| f.starts_with("draw-")),
                mine.len()
            );
            assert_eq!(
                files_in(&dir.join("nested"), |f| f.starts_with("fold-")),
                theirs.len()
            );
            draws.extend(mine);
            folds.extend(theirs);
        }
        draws.sort_unstable();
        folds.sort_unstable();
        assert_eq!(
            draws,
            (0..7).collect::<Vec<_>>(),
            "{n} shards: draws not a partition"
        );
        assert_eq!(
            folds,
            (0..3).collect::<Vec<_>>(),
            "{n} shards: folds not a partition"
        );
        let report = ok(&forkmap(&["check".as_ref(), base.as_os_str()]));
        assert!(
            report.ends_with("complete\n") && !report.contains("incomplete"),
            "{report}"
        );
        assert_eq!(report.matches("null       shard").count(), n, "{report}");
        // The map of the shards as they are: each holds only its share of the null draws
        // and nested folds, so neither section is shown, and the notes say to gather.
        let map_dir = tmp.path().join(format!("map{n}"));
        ok(&forkmap(&[
            "map".as_ref(),
            base.as_os_str(),
            "--out".as_ref(),
            map_dir.as_os_str(),
        ]));
        assert!(!map_dir.join("nested_summary.parquet").exists());
        assert!(!map_dir.join("null_summary.parquet").exists());
        let page = std::fs::read_to_string(map_dir.join("index.html")).unwrap();
        assert!(
            page.contains("nested estimate&#39;s outer folds are spread over the shards (3 done)"),
            "no nested note: {}",
            page.split("Notes on the runs read")
                .nth(1)
                .unwrap_or("no notes")
                .chars()
                .take(1500)
                .collect::<String>()
        );
        assert!(
            page.contains("draws are spread over the shards (7 done)"),
            "no null note"
        );
        let gathered = tmp.path().join(format!("gathered{n}"));
        let text = ok(&gather(&base, &gathered));
        assert!(text.contains("null       7 draws gathered"), "{text}");
        assert!(text.contains("nested     3 outer folds gathered"), "{text}");
        let (got, got_manifest) = derived_files(&gathered);
        let names = |v: &[(String, Vec<u8>)]| v.iter().map(|f| f.0.clone()).collect::<Vec<_>>();
        assert_eq!(names(&got), names(&want), "{n} shards: other files");
        for ((name, g), (_, w)) in got.iter().zip(&want) {
            assert!(g == w, "{n} shards: {name} differs from the whole run's");
        }
        assert_eq!(got_manifest, want_manifest, "{n} shards: null manifest");
        let m = manifest(&gathered);
        assert!(
            m.get("shard_draws").is_none() && m.get("shard_folds").is_none(),
            "{m}"
        );
        let report = ok(&forkmap(&["check".as_ref(), gathered.as_os_str()]));
        assert!(report.contains("null       7 of 7 draws"), "{report}");
    }
    // The report of the gathered run shows both (run on it: nothing is rerun).
    let gathered = tmp.path().join("gathered3");
    let text = ok(&run_cli(&cfg, &gathered, &["--no-curves"]));
    assert!(
        text.contains("null       7 draws x 6 specs (0 run now)"),
        "{text}"
    );
    let page = std::fs::read_to_string(gathered.join("report/index.html")).unwrap();
    assert!(
        page.contains("id=\"table-null_summary\""),
        "no null section"
    );
    assert!(page.contains("nested"), "no nested section");
    assert!(gathered.join("report/nested_summary.parquet").is_file());
    let (again, _) = derived_files(&gathered);
    assert!(
        again == want,
        "the run on the gathered folder changed its null or nested files"
    );
}

#[test]
fn gather_refuses_a_missing_draw_or_fold_and_other_settings_naming_them() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", NULL_NESTED);
    let base = tmp.path().join("shards");
    let dirs: Vec<PathBuf> = (1..=3).map(|i| base.join(format!("s{i}"))).collect();
    for (i, d) in dirs.iter().enumerate() {
        ok(&run_cli(&cfg, d, &["--shard", &format!("{}/3", i + 1)]));
    }
    let gathered = tmp.path().join("gathered");
    // A draw file removed from the shard that owns it.
    let (k, dir, draw) = dirs
        .iter()
        .enumerate()
        .find_map(|(k, d)| {
            let m = manifest(d);
            m["shard_draws"]
                .as_array()
                .unwrap()
                .last()
                .map(|v| (k, d.clone(), v.as_u64().unwrap()))
        })
        .unwrap();
    let file = dir.join(format!("null/draws/draw-{draw:06}.parquet"));
    let kept = std::fs::read(&file).unwrap();
    std::fs::remove_file(&file).unwrap();
    let o = forkmap(&["check".as_ref(), base.as_os_str()]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains(&format!("shard {}/3", k + 1))
            && text.contains(&format!("missing draws {draw}")),
        "{text}"
    );
    let o = gather(&base, &gathered);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains(&format!("missing draws {draw} (owned by shard {}/3", k + 1)),
        "{err}"
    );
    wrote_nothing(&gathered);
    std::fs::write(&file, kept).unwrap();
    // An outer fold removed.
    let (k, dir, fold) = dirs
        .iter()
        .enumerate()
        .find_map(|(k, d)| {
            let m = manifest(d);
            m["shard_folds"]
                .as_array()
                .unwrap()
                .first()
                .map(|v| (k, d.clone(), v.as_u64().unwrap()))
        })
        .unwrap();
    let file = dir.join(format!("nested/fold-{fold:03}.parquet"));
    let kept = std::fs::read(&file).unwrap();
    std::fs::remove_file(&file).unwrap();
    let o = gather(&base, &gathered);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains(&format!(
            "missing outer folds {fold} (owned by shard {}/3",
            k + 1
        )),
        "{err}"
    );
    wrote_nothing(&gathered);
    std::fs::write(&file, kept).unwrap();
    ok(&forkmap(&["check".as_ref(), base.as_os_str()]));
    // Shard 2 rerun with another null.top_k: its null restarts under the new identity.
    let other = config(
        tmp.path(),
        "b",
        &NULL_NESTED.replace("top_k = 2", "top_k = 3"),
    );
    ok(&run_cli(&other, &dirs[1], &["--shard", "2/3"]));
    let o = gather(&base, &gathered);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("shard 2/3")
            && err.contains("null.top_k differs (shard 1/3: 2, shard 2/3: 3)"),
        "{err}"
    );
    wrote_nothing(&gathered);
    // `check` says so too.
    let o = forkmap(&["check".as_ref(), base.as_os_str()]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains("gather     would refuse: the null of shard 2/3"),
        "{text}"
    );
    ok(&run_cli(&cfg, &dirs[1], &["--shard", "2/3"]));
    // Shard 3 rerun with another nested sample size: its settings differ.
    let other = config(
        tmp.path(),
        "c",
        &NULL_NESTED.replace("specs = 5", "specs = 4"),
    );
    ok(&run_cli(&other, &dirs[2], &["--shard", "3/3"]));
    let o = gather(&base, &gathered);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("nested estimate of shard 3/3")
            && err.contains("nested.specs differs (shard 1/3: 5, shard 3/3: 4)"),
        "{err}"
    );
    wrote_nothing(&gathered);
    ok(&run_cli(&cfg, &dirs[2], &["--shard", "3/3"]));
    ok(&gather(&base, &gathered));
}

#[test]
fn a_shard_killed_mid_null_resumes_to_the_same_files() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", "[null]\ndraws = 16\nspecs = 8\n");
    let whole = tmp.path().join("whole");
    ok(&run_cli(&cfg, &whole, &["--no-map", "--no-curves"]));
    let (want, _) = derived_files(&whole);
    let mut mid = 0;
    for k in 0..3u64 {
        let out = tmp.path().join(format!("killed-{k}"));
        let mut child = spawn_run(&cfg, &out, &["--shard", "2/2"]);
        let done = |o: &Path| files_in(&o.join("null/draws"), |n| n.starts_with("draw-"));
        let t0 = std::time::Instant::now();
        while done(&out) < 1 + 2 * k as usize
            && child.try_wait().unwrap().is_none()
            && t0.elapsed().as_secs() < 300
        {
            std::thread::sleep(std::time::Duration::from_micros(300));
        }
        let finished = child.try_wait().unwrap().is_some();
        let _ = child.kill(); // SIGKILL on Unix
        let _ = child.wait();
        let mine = manifest(&out)["shard_draws"].as_array().unwrap().len();
        if !finished && done(&out) < mine {
            mid += 1;
        }
        ok(&run_cli(&cfg, &out, &["--shard", "2/2"]));
        let (got, m) = derived_files(&out);
        assert_eq!(m["shard"], "2/2");
        assert_eq!(
            got.iter()
                .filter(|(n, _)| n.starts_with("null/draws/"))
                .count(),
            mine
        );
        for (name, bytes) in &got {
            let w = want.iter().find(|(n, _)| n == name).map(|f| &f.1);
            assert!(
                w == Some(bytes),
                "kill {k}: {name} differs from the whole run's"
            );
        }
    }
    assert!(mid >= 2, "only {mid} of 3 kills landed mid-null");
}

/// The null tests' space with a nested estimate and a sampled null (its `draws` follows).
fn split() -> String {
    format!(
        "{}{}[nested]\nouter_folds = 3\nspecs = 5\n[null]\nspecs = 6\n",
        crate::null::data(),
        crate::null::SPACE
    )
}

/// The deal keeps the spec split, covers every draw and fold once, and changing `draws`
/// moves none of the draws kept (so a shard's complete draws stay its own).
#[test]
fn the_deal_keeps_the_specs_and_is_stable_in_the_draws() {
    use forkmap::run::share::Split;
    let base = crate::common::prepared(&format!("{}draws = 7\n", split()));
    let more = crate::common::prepared(&format!("{}draws = 12\n", split()));
    for n in [1usize, 2, 3, 5] {
        let a = Split::of(&base, n);
        let b = Split::of(&more, n);
        assert_eq!(a.specs, forkmap::shard::owners(&base.space, &base.panel, n));
        assert_eq!(a.specs, b.specs, "{n} shards: the spec split moved");
        assert_eq!(a.folds, b.folds, "{n} shards: the folds moved");
        let (da, db) = (a.draws.unwrap(), b.draws.unwrap());
        assert_eq!((da.len(), db.len()), (7, 12));
        assert_eq!(da[..], db[..7], "{n} shards: kept draws moved");
        assert!(da.iter().chain(a.folds.as_ref().unwrap()).all(|&o| o < n));
        // Every job dealt to the least loaded: the loads end within one job of each other
        // (the largest job is at most the null's or nested's, or the costliest spec's).
        let spec_max = base
            .space
            .specs
            .iter()
            .map(|s| forkmap::shard::spec_cost(s, &base.panel))
            .fold(0.0, f64::max);
        let all: f64 = base
            .space
            .specs
            .iter()
            .map(|s| forkmap::shard::spec_cost(s, &base.panel))
            .sum();
        let of = |idx: Vec<usize>| -> f64 {
            idx.iter()
                .map(|&i| forkmap::shard::spec_cost(&base.space.specs[i], &base.panel))
                .sum()
        };
        let n_specs = base.space.specs.len();
        // A draw costs its 6 sampled specs; an outer fold at most its 5 sampled specs (as
        // many inner fits as the run's folds, on fewer rows).
        let draw = of(forkmap::null::sample_specs(n_specs, Some(6), 11));
        let fold = of(forkmap::nested::sample_specs(n_specs, Some(5), 11));
        let max = a.loads.iter().cloned().fold(0.0, f64::max);
        let min = a.loads.iter().cloned().fold(f64::INFINITY, f64::min);
        let job = spec_max.max(draw).max(fold);
        assert!(
            max - min <= job + 1e-9,
            "{n}: {:?} (largest job {job})",
            a.loads
        );
        assert!(
            a.loads.iter().sum::<f64>() > all,
            "{n}: nothing dealt beyond the specs"
        );
        let text = forkmap::run::share::plan_table(&base, n).unwrap();
        assert_eq!(
            text.lines()
                .filter(|l| l.contains(&format!("/{n} ")))
                .count(),
            n,
            "{text}"
        );
    }
    // More shards than specs is refused by the plan table as by run.
    assert!(forkmap::run::share::plan_table(&base, 25).is_err());
}

#[test]
fn map_leaves_out_an_unfinished_nested_estimate_and_says_so() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", NULL_NESTED);
    let run = tmp.path().join("run");
    ok(&run_cli(&cfg, &run, &["--no-curves", "--no-map"]));
    // As if the run had stopped after two of its three outer folds.
    std::fs::remove_file(run.join("nested/fold-001.parquet")).unwrap();
    let map_dir = tmp.path().join("map");
    ok(&forkmap(&[
        "map".as_ref(),
        run.as_os_str(),
        "--out".as_ref(),
        map_dir.as_os_str(),
    ]));
    assert!(!map_dir.join("nested_summary.parquet").exists());
    let page = std::fs::read_to_string(map_dir.join("index.html")).unwrap();
    assert!(
        page.contains("The nested estimate is unfinished (2 of 3 outer folds"),
        "no note on the unfinished nested estimate"
    );
    // The null is whole: its section stays.
    assert!(map_dir.join("null_summary.parquet").is_file());
}
