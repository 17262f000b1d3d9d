//! `forkmap run BIGGER --out RUN --extend`: a finished run extended with a config that keeps
//! every spec of it runs only the new specs; the old parts stay byte for byte; the result
//! equals a fresh run of the larger config, table for table (every specs part, old and new,
//! has every declared parameter column, so the parts share one schema); the manifest
//! records the lineage; anything that would change an old spec's results (data, codebook,
//! folds, seed, importance settings, a removed option) is refused naming it, with nothing
//! written; a kill mid-extension resumes.

use crate::common::root;
use crate::end_to_end::read_table;
use arrow_array::{Array, BooleanArray, Float64Array, Int32Array, Int64Array, StringArray};
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::process::Output;
use std::time::Instant;

/// The small config: one pool, two compressions, two models.
const SMALL: &str = r#"
seed = {seed}
[data]
file = "{data}"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
codebook = "{root}/toy-panel/codebook.csv"
[folds]
k = {k}
[choices]
pool = ["all"]
compress = ["none", "pca"]
model = ["ridge", "tree"]
[grid.pca]
k = [3]
[grid.ridge]
alpha = [1]
[importance]
repeats = {repeats}
kinds = ["permutation", "group", "native"]
{within}
[output]
batch_specs = {batch}
"#;

/// The larger config: a pool (so new compression paths: new loadings), a model with a grid
/// parameter the small space lacks (a new `forest_trees` column), a grid value added.
const BIG: &str = r#"
seed = {seed}
[data]
file = "{data}"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
codebook = "{root}/toy-panel/codebook.csv"
[folds]
k = {k}
[choices]
pool = ["all", "core"]
compress = ["none", "pca"]
model = ["ridge", "tree", "forest"]
[pools]
core = ["inc_median_income", "cli_heating_degree_days", "prc_tariff_index", "hou_pre1950_share"]
[grid.pca]
k = [3]
[grid.ridge]
alpha = [1, 10]
[grid.forest]
trees = [15]
[importance]
repeats = {repeats}
kinds = ["permutation", "group", "native"]
{within}
[output]
batch_specs = {batch}
"#;

#[derive(Clone)]
struct Knobs {
    seed: u64,
    k: usize,
    repeats: usize,
    within: &'static str,
    batch: usize,
    data: PathBuf,
}

impl Default for Knobs {
    fn default() -> Self {
        Knobs {
            seed: 3,
            k: 4,
            repeats: 1,
            within: "",
            batch: 2,
            data: root().join("toy-panel/panel.csv"),
        }
    }
}

fn write_config(dir: &Path, name: &str, template: &str, k: &Knobs) -> PathBuf {
    let text = template
        .replace("{seed}", &k.seed.to_string())
        .replace("{data}", &k.data.display().to_string())
        .replace("{root}", &root().display().to_string())
        .replace("{k}", &k.k.to_string())
        .replace("{repeats}", &k.repeats.to_string())
        .replace("{within}", k.within)
        .replace("{batch}", &k.batch.to_string());
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

use crate::common::{forkmap, run_cli as run};

fn ok(o: &Output, what: &str) {
    assert!(
        o.status.success(),
        "{what}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

fn manifest(out: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap()
}

/// Every file under `dir` (relative path -> bytes).
fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.insert(
                    p.strip_prefix(dir).unwrap().to_path_buf(),
                    std::fs::read(&p).unwrap(),
                );
            }
        }
    }
    out
}

fn cell(c: &dyn Array, i: usize) -> String {
    let any = c.as_any();
    if c.is_null(i) {
        "null".to_string()
    } else if let Some(a) = any.downcast_ref::<StringArray>() {
        a.value(i).to_string()
    } else if let Some(a) = any.downcast_ref::<Float64Array>() {
        format!("{:x}", a.value(i).to_bits())
    } else if let Some(a) = any.downcast_ref::<Int32Array>() {
        a.value(i).to_string()
    } else if let Some(a) = any.downcast_ref::<Int64Array>() {
        a.value(i).to_string()
    } else if let Some(a) = any.downcast_ref::<BooleanArray>() {
        a.value(i).to_string()
    } else {
        panic!("unexpected column type {}", c.data_type())
    }
}

/// Every table read back as a reader that unions parts by column name would (a column a
/// part lacks is null), sorted rows of `name=value` (seconds columns left out, floats as
/// bit patterns); duplicated rows fail.
fn tables(out: &Path) -> Vec<(String, Vec<String>)> {
    let mut res = Vec::new();
    for t in ["specs", "predictions", "loadings", "importance"] {
        let batches = read_table(&out.join(t));
        let names: BTreeSet<String> = batches
            .iter()
            .flat_map(|b| {
                b.schema()
                    .fields()
                    .iter()
                    .map(|f| f.name().clone())
                    .collect::<Vec<_>>()
            })
            .filter(|n| !n.ends_with("seconds"))
            .collect();
        let mut rows = Vec::new();
        for b in &batches {
            for i in 0..b.num_rows() {
                let cells: Vec<String> = names
                    .iter()
                    .map(|n| {
                        let v = b
                            .column_by_name(n)
                            .map(|c| cell(c.as_ref(), i))
                            .unwrap_or_else(|| "null".into());
                        format!("{n}={v}")
                    })
                    .collect();
                rows.push(cells.join("|"));
            }
        }
        rows.sort();
        let n = rows.len();
        rows.dedup();
        assert_eq!(rows.len(), n, "{t}: duplicated rows in {}", out.display());
        res.push((t.to_string(), rows));
    }
    res
}

fn assert_same_tables(a: &Path, b: &Path) {
    let (ta, tb) = (tables(a), tables(b));
    for ((name, ra), (_, rb)) in ta.iter().zip(&tb) {
        assert!(!ra.is_empty(), "{name}: no rows");
        assert_eq!(
            ra.len(),
            rb.len(),
            "{name}: {} rows in {}, {} in {}",
            ra.len(),
            a.display(),
            rb.len(),
            b.display()
        );
        let differ = ra.iter().zip(rb).filter(|(x, y)| x != y).count();
        assert_eq!(differ, 0, "{name}: {differ} rows differ");
    }
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).to_string()
}

/// Extended == fresh for every table, with and without the deferred permutation pass.
#[test]
fn an_extended_run_equals_a_fresh_run_and_keeps_its_old_parts() {
    for within in ["", "within = 0.02"] {
        let tmp = tempfile::tempdir().unwrap();
        let knobs = Knobs {
            within,
            ..Knobs::default()
        };
        let small = write_config(tmp.path(), "small.toml", SMALL, &knobs);
        let big = write_config(tmp.path(), "big.toml", BIG, &knobs);
        let fresh = tmp.path().join("fresh");
        ok(&run(&big, &fresh, &["--no-map"]), "fresh run");
        let out = tmp.path().join("run");
        ok(&run(&small, &out, &[]), "small run");
        let old = manifest(&out);
        let old_specs = old["specs"].as_u64().unwrap() as usize;
        let before = snapshot(&out);
        let o = run(&big, &out, &["--extend"]);
        ok(&o, "extension");
        // The old parts are untouched, byte for byte (second-pass importance parts aside:
        // the pass covers the specs near the best of the whole space, so it is redone).
        let after = snapshot(&out);
        let mut kept = 0;
        for (p, bytes) in &before {
            let name = p.file_name().unwrap().to_string_lossy();
            if name.starts_with("part-") && !name.starts_with("part-i") {
                assert_eq!(after.get(p), Some(bytes), "{} changed", p.display());
                kept += 1;
            }
        }
        assert!(kept >= 4 * 2, "only {kept} old parts");
        assert_same_tables(&out, &fresh);
        // The lineage: the first config and the extension, with counts and ids.
        let m = manifest(&out);
        let f = manifest(&fresh);
        assert_eq!(m["specs"], f["specs"]);
        assert_eq!(m["specs_written"], f["specs"]);
        assert_eq!(m["specs_ok"], f["specs_ok"]);
        assert_eq!(m["config"], f["config"]);
        assert_eq!(m["status"], "complete");
        assert_eq!(
            m["importance_permutation_specs"],
            f["importance_permutation_specs"]
        );
        let l = m["lineage"].as_array().unwrap();
        assert_eq!(l.len(), 2, "{l:?}");
        assert_eq!(l[0]["config_file"], old["config_file"]);
        assert_eq!(l[0]["specs_added"], old_specs);
        assert_eq!(
            l[0]["config_sha256"],
            forkmap::run::extend::config_sha256(&old["config"])
        );
        assert_eq!(l[1]["config_file"], big.display().to_string());
        assert_eq!(
            l[1]["config_sha256"],
            forkmap::run::extend::config_sha256(&f["config"])
        );
        let total = f["specs"].as_u64().unwrap() as usize;
        assert!(total > old_specs, "{total} vs {old_specs}");
        assert_eq!(l[1]["specs_added"], total - old_specs);
        assert_eq!(
            l[1]["spec_ids"].as_array().unwrap().len(),
            total - old_specs
        );
        assert!(l[1]["finished"].is_string());
        // Every specs part, old and new, has the same columns: the parameter columns are
        // every declared parameter, so the forest's exist (null) in the old parts too.
        let schemas: std::collections::BTreeSet<Vec<String>> = std::fs::read_dir(out.join("specs"))
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.extension().is_some_and(|x| x == "parquet"))
            .map(|p| {
                let f = std::fs::File::open(&p).unwrap();
                parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder::try_new(f)
                    .unwrap()
                    .schema()
                    .fields()
                    .iter()
                    .map(|f| f.name().clone())
                    .collect()
            })
            .collect();
        assert_eq!(schemas.len(), 1, "{schemas:?}");
        let names = schemas.into_iter().next().unwrap();
        assert!(names.iter().any(|n| n == "forest_trees"), "{names:?}");
        // The report was rewritten for the whole extended space.
        assert!(out.join("report/index.html").is_file());
        let page = std::fs::read_to_string(out.join("report/index.html")).unwrap();
        assert!(page.contains("forest"), "the report lacks the new model");
        // `check` reports the lineage and a complete run.
        let c = forkmap(&["check".as_ref(), out.as_os_str()]);
        let text = String::from_utf8_lossy(&c.stdout);
        assert!(c.status.success(), "{text}");
        assert!(
            text.contains("extended") && text.contains(&format!("{total} of {total}")),
            "{text}"
        );
        // The same config again is a resume with nothing to run; nothing changes.
        let tables_before = tables(&out);
        ok(&run(&big, &out, &["--extend", "--no-map"]), "again");
        assert_eq!(tables(&out), tables_before);
        assert_eq!(manifest(&out)["lineage"].as_array().unwrap().len(), 2);
    }
}

/// Each difference that would change an old spec's results is refused naming it; the run
/// directory is left byte for byte as it was.
#[test]
fn extensions_that_change_old_results_are_refused_naming_the_difference() {
    let tmp = tempfile::tempdir().unwrap();
    let base = Knobs::default();
    let small = write_config(tmp.path(), "small.toml", SMALL, &base);
    let out = tmp.path().join("run");
    ok(&run(&small, &out, &[]), "small run");
    let before = snapshot(&out);
    // The same rows in a file with one more trailing newline: another sha256.
    let data2 = tmp.path().join("panel-copy.csv");
    let mut bytes = std::fs::read(&base.data).unwrap();
    bytes.push(b'\n');
    std::fs::write(&data2, bytes).unwrap();
    let removed = BIG.replace(
        r#"model = ["ridge", "tree", "forest"]"#,
        r#"model = ["ridge", "forest"]"#,
    );
    let cases: Vec<(&str, String, Knobs, Vec<&str>)> = vec![
        (
            "data",
            BIG.to_string(),
            Knobs {
                data: data2,
                ..base.clone()
            },
            vec!["data file differs", "sha256"],
        ),
        (
            "folds",
            BIG.to_string(),
            Knobs {
                k: 5,
                ..base.clone()
            },
            vec!["folds.k", "the run's 4", "this config's 5"],
        ),
        (
            "seed",
            BIG.to_string(),
            Knobs {
                seed: 4,
                ..base.clone()
            },
            vec!["seed", "the run's 3", "this config's 4"],
        ),
        (
            "removed",
            removed,
            base.clone(),
            vec!["removes option model = \"tree\""],
        ),
        (
            "importance",
            BIG.to_string(),
            Knobs {
                repeats: 2,
                ..base.clone()
            },
            vec!["importance.repeats", "the run's 1", "this config's 2"],
        ),
        (
            "importance-within",
            BIG.to_string(),
            Knobs {
                within: "within = 0.1",
                ..base.clone()
            },
            vec!["importance.within", "not set"],
        ),
        (
            "removed-grid",
            BIG.replace("alpha = [1, 10]", "alpha = [10]"),
            base.clone(),
            vec!["grid value ridge.alpha = 1"],
        ),
        (
            "exclusion",
            format!("{BIG}\n[[exclude]]\nmodel = \"tree\"\ncompress = \"pca\"\n"),
            base.clone(),
            vec!["space lacks 1 of the run's", "spec_id"],
        ),
        (
            "nothing new",
            SMALL.replace("batch_specs = {batch}", "batch_specs = 3"),
            base.clone(),
            vec!["adds no spec"],
        ),
    ];
    for (name, template, knobs, wants) in cases {
        let cfg = write_config(tmp.path(), &format!("{name}.toml"), &template, &knobs);
        let o = run(&cfg, &out, &["--extend"]);
        assert_ne!(o.status.code(), Some(0), "{name}: accepted");
        let err = stderr(&o);
        assert!(err.contains("cannot be extended"), "{name}: {err}");
        for w in wants {
            assert!(err.contains(w), "{name}: {err} lacks `{w}`");
        }
        assert!(
            snapshot(&out) == before,
            "{name}: the run directory changed"
        );
    }
    // Shards: `--extend --shard` is refused by the command line, a shard directory by
    // `--extend`; an empty or absent folder holds nothing to extend.
    let big = write_config(tmp.path(), "big.toml", BIG, &base);
    let o = run(&big, &out, &["--extend", "--shard", "1/2"]);
    assert_ne!(o.status.code(), Some(0));
    assert!(snapshot(&out) == before);
    let shard = tmp.path().join("shard1");
    ok(&run(&small, &shard, &["--shard", "1/2"]), "shard");
    let o = run(&big, &shard, &["--extend"]);
    assert_ne!(o.status.code(), Some(0));
    assert!(
        stderr(&o).contains("shards are not extended"),
        "{}",
        stderr(&o)
    );
    let none = tmp.path().join("none");
    let o = run(&big, &none, &["--extend"]);
    assert_ne!(o.status.code(), Some(0));
    assert!(
        stderr(&o).contains("no forkmap run to extend"),
        "{}",
        stderr(&o)
    );
    assert!(!none.exists(), "--extend created a folder");
    // A run of another forkmap version, and an unfinished run (manifests edited in copies).
    for (name, field, value, want) in [
        (
            "version",
            "version",
            "0.0.0-old",
            "forkmap version differs (the run's 0.0.0-old,",
        ),
        ("unfinished", "status", "running", "it is unfinished"),
    ] {
        let copy = tmp.path().join(name);
        for (rel, bytes) in &before {
            let p = copy.join(rel);
            std::fs::create_dir_all(p.parent().unwrap()).unwrap();
            std::fs::write(p, bytes).unwrap();
        }
        let mut m = manifest(&copy);
        m[field] = serde_json::json!(value);
        std::fs::write(copy.join("manifest.json"), m.to_string()).unwrap();
        let was = snapshot(&copy);
        let o = run(&big, &copy, &["--extend"]);
        assert_ne!(o.status.code(), Some(0), "{name}: accepted");
        assert!(stderr(&o).contains(want), "{name}: {}", stderr(&o));
        assert!(snapshot(&copy) == was, "{name}: the run directory changed");
    }
    // Without --extend, a run the config extends is refused with a pointer to --extend.
    let o = run(&big, &out, &[]);
    assert_ne!(o.status.code(), Some(0));
    assert!(stderr(&o).contains("add --extend"), "{}", stderr(&o));
    assert!(snapshot(&out) == before);
}

/// A gathered run extends like any finished run (its lineage keeps where the shards were),
/// and `forkmap map` reads the extended run.
/// The codebook is part of the run's identity by content, not by path: a codebook edited in
/// place (two indicators moved to another group, same file name) makes the run's group
/// importances stale, so both an extension and a resume are refused naming it, and
/// nothing is written (cold review 3, M1).
#[test]
fn a_codebook_edited_in_place_is_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let cb = tmp.path().join("codebook.csv");
    std::fs::copy(root().join("toy-panel/codebook.csv"), &cb).unwrap();
    let local = |t: &str| t.replace("{root}/toy-panel/codebook.csv", &cb.display().to_string());
    let base = Knobs::default();
    let small = write_config(tmp.path(), "small.toml", &local(SMALL), &base);
    let big = write_config(tmp.path(), "big.toml", &local(BIG), &base);
    let out = tmp.path().join("run");
    ok(&run(&small, &out, &[]), "small run");
    let before = snapshot(&out);
    let text = std::fs::read_to_string(&cb).unwrap();
    let moved = text
        .replace("inc_unemployment,income,", "inc_unemployment,housing,")
        .replace("inc_benefit_claims,income,", "inc_benefit_claims,prices,");
    assert_ne!(moved, text);
    std::fs::write(&cb, moved).unwrap();
    let e = run(&big, &out, &["--extend"]);
    assert!(
        !e.status.success(),
        "an extension with an edited codebook ran"
    );
    assert!(stderr(&e).contains("codebook differs"), "{}", stderr(&e));
    let r = run(&small, &out, &[]);
    assert!(!r.status.success(), "a resume with an edited codebook ran");
    assert!(stderr(&r).contains("codebook"), "{}", stderr(&r));
    assert_eq!(
        snapshot(&out),
        before,
        "a refusal changed the run directory"
    );
}

/// An extension with `--no-curves` leaves no curves of the smaller run behind (they would
/// describe its best spec and good set; cold review 3, S2).
#[test]
fn an_extension_without_curves_drops_the_old_ones() {
    let tmp = tempfile::tempdir().unwrap();
    let base = Knobs::default();
    let small = write_config(tmp.path(), "small.toml", SMALL, &base);
    let big = write_config(tmp.path(), "big.toml", BIG, &base);
    let out = tmp.path().join("run");
    ok(&run(&small, &out, &[]), "small run");
    assert!(out.join("curves").is_dir(), "the small run drew curves");
    ok(&run(&big, &out, &["--extend", "--no-curves"]), "extension");
    assert!(!out.join("curves").exists(), "stale curves kept");
    assert!(out.join("report/index.html").is_file());
}

#[test]
fn a_gathered_run_is_extended() {
    let tmp = tempfile::tempdir().unwrap();
    let knobs = Knobs {
        within: "within = 0.05",
        ..Knobs::default()
    };
    let small = write_config(tmp.path(), "small.toml", SMALL, &knobs);
    let big = write_config(tmp.path(), "big.toml", BIG, &knobs);
    let fresh = tmp.path().join("fresh");
    ok(&run(&big, &fresh, &["--no-map"]), "fresh run");
    let shards = tmp.path().join("shards");
    for s in ["1/2", "2/2"] {
        let d = shards.join(s.replace('/', "-of-"));
        ok(&run(&small, &d, &["--shard", s]), "shard");
    }
    let out = tmp.path().join("gathered");
    let mut a: Vec<&std::ffi::OsStr> = vec!["gather".as_ref(), shards.as_os_str()];
    a.extend([
        "--out".as_ref(),
        out.as_os_str(),
        "--config".as_ref(),
        small.as_os_str(),
    ]);
    ok(&forkmap(&a), "gather");
    ok(&run(&big, &out, &["--extend", "--no-map"]), "extension");
    assert_same_tables(&out, &fresh);
    let m = manifest(&out);
    assert_eq!(
        m["lineage"][0]["gathered_from"].as_array().unwrap().len(),
        2
    );
    assert_eq!(m["status"], "complete");
    let o = forkmap(&["map".as_ref(), out.as_os_str(), "--quiet".as_ref()]);
    ok(&o, "map");
    assert!(out.join("report/index.html").is_file());
}

fn specs_parts(d: &Path) -> usize {
    crate::common::files_in(&d.join("specs"), |n| !n.starts_with('.'))
}

/// SIGKILL mid-extension, then the same command (or a plain run of the larger config)
/// resumes the extension; the result equals a fresh run of the larger config.
#[test]
fn a_killed_extension_resumes() {
    let tmp = tempfile::tempdir().unwrap();
    let knobs = Knobs {
        batch: 1,
        ..Knobs::default()
    };
    let small = write_config(tmp.path(), "small.toml", SMALL, &knobs);
    let big = write_config(tmp.path(), "big.toml", BIG, &knobs);
    let fresh = tmp.path().join("fresh");
    ok(&run(&big, &fresh, &["--no-map"]), "fresh run");
    let total = manifest(&fresh)["specs"].as_u64().unwrap() as usize;
    let mut interrupted = 0;
    for (k, (wait_parts, extend_again)) in [(1usize, true), (4, false), (7, true)]
        .into_iter()
        .enumerate()
    {
        let out = tmp.path().join(format!("killed-{k}"));
        ok(&run(&small, &out, &["--no-map"]), "small run");
        let old_parts = specs_parts(&out);
        let target = old_parts + wait_parts;
        let mut child = crate::common::spawn_run(&big, &out, &["--extend", "--no-map"]);
        let t0 = Instant::now();
        while specs_parts(&out) < target
            && child.try_wait().unwrap().is_none()
            && t0.elapsed().as_secs() < 120
        {
            std::thread::sleep(std::time::Duration::from_micros(300));
        }
        let finished_before = child.try_wait().unwrap().is_some();
        let _ = child.kill();
        let _ = child.wait();
        let m = manifest(&out);
        if !finished_before && m["status"] == "running" {
            interrupted += 1;
            // The unfinished extension already names its config and lineage.
            assert_eq!(m["lineage"].as_array().unwrap().len(), 2);
            assert!(m["lineage"][1]["finished"].is_null());
            // `check` calls it unfinished.
            let c = forkmap(&["check".as_ref(), out.as_os_str()]);
            assert_eq!(c.status.code(), Some(1));
            assert!(String::from_utf8_lossy(&c.stdout).contains("unfinished"));
        }
        let extra: &[&str] = if extend_again {
            &["--extend", "--no-map"]
        } else {
            &["--no-map"]
        };
        ok(&run(&big, &out, extra), "resume");
        assert_same_tables(&out, &fresh);
        let m = manifest(&out);
        assert_eq!(m["status"], "complete");
        assert_eq!(m["specs_written"], total);
        assert_eq!(m["lineage"].as_array().unwrap().len(), 2);
        assert!(m["lineage"][1]["finished"].is_string());
    }
    assert!(
        interrupted >= 2,
        "only {interrupted} of 3 kills landed mid-extension"
    );
}
