//! The conclusions under the permutation null (`report/null_claims.parquet`): a user claim's
//! observed and null supports recomputed here from the run's tables and `null/goodranks`
//! (ratio rule, the report's default), p by the formula, the automatic conclusions' adjusted
//! p by its formula and never below the unadjusted one, the page's table; and a run whose
//! null lacks `goodranks` (written before it existed) is reported as not available, with
//! no crash.

use crate::null::{column_str, config};
use forkmap::null::table::{read_draws, read_goodranks, NULL_DIR};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::collections::BTreeMap;
use std::path::Path;
use std::process::Command;

const A: &str = "inc_median_income";
const B: &str = "cli_heating_degree_days";

fn batch(path: &Path) -> arrow_array::RecordBatch {
    let f = std::fs::File::open(path).unwrap();
    ParquetRecordBatchReaderBuilder::try_new(f)
        .unwrap()
        .build()
        .unwrap()
        .next()
        .unwrap()
        .unwrap()
}

/// A number column, nulls (undefined) as NaN.
fn column_f64(b: &arrow_array::RecordBatch, name: &str) -> Vec<f64> {
    use arrow_array::Array;
    let a = b
        .column_by_name(name)
        .unwrap()
        .as_any()
        .downcast_ref::<arrow_array::Float64Array>()
        .unwrap();
    (0..a.len())
        .map(|i| if a.is_null(i) { f64::NAN } else { a.value(i) })
        .collect()
}

fn forkmap(args: &[&std::ffi::OsStr]) -> String {
    let o = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(args)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    String::from_utf8_lossy(&o.stdout).to_string()
}

/// Share of `specs` (rank maps name -> rank) where A ranks above B; NaN when empty.
fn share_above(specs: &[&BTreeMap<String, i64>]) -> f64 {
    let n = specs.len();
    if n == 0 {
        return f64::NAN;
    }
    specs.iter().filter(|r| r[A] < r[B]).count() as f64 / n as f64
}

#[test]
fn a_claims_null_support_is_recomputed_from_goodranks() {
    let tmp = tempfile::tempdir().unwrap();
    let claim = format!(
        "[null]\ndraws = 9\nspecs = 16\n[[map.claim]]\nranks_above = [\"{A}\", \"{B}\"]\nkind = \"coefficient\"\nlevel = \"indicator\"\n"
    );
    let cfg = config(tmp.path(), "a", &claim);
    let out = tmp.path().join("run");
    forkmap(&[
        "run".as_ref(),
        cfg.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--threads".as_ref(),
        "2".as_ref(),
        "--quiet".as_ref(),
    ]);
    // Observed: the good set (mae <= 1.05 x best) of the null's sample in the run.
    let m: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(out.join(NULL_DIR).join("manifest.json")).unwrap(),
    )
    .unwrap();
    let sample: Vec<String> = m["spec_ids"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    let mut mae: BTreeMap<String, f64> = BTreeMap::new();
    for b in crate::end_to_end::read_table(&out.join("specs")) {
        for (id, e) in column_str(&b, "spec_id")
            .into_iter()
            .zip(column_f64(&b, "mae"))
        {
            if sample.contains(&id) && e.is_finite() {
                mae.insert(id, e);
            }
        }
    }
    let mut ranks: BTreeMap<String, BTreeMap<String, i64>> = BTreeMap::new();
    for b in crate::end_to_end::read_table(&out.join("importance")) {
        let (ids, names, levels, kinds) = (
            column_str(&b, "spec_id"),
            column_str(&b, "indicator"),
            column_str(&b, "level"),
            column_str(&b, "kind"),
        );
        let rank = b
            .column_by_name("rank")
            .unwrap()
            .as_any()
            .downcast_ref::<arrow_array::Int32Array>()
            .unwrap();
        for i in 0..ids.len() {
            if levels[i] == "indicator" && kinds[i] == "coefficient" {
                ranks
                    .entry(ids[i].clone())
                    .or_default()
                    .insert(names[i].clone(), i64::from(rank.value(i)));
            }
        }
    }
    let best = mae.values().copied().fold(f64::INFINITY, f64::min);
    let good: Vec<&BTreeMap<String, i64>> = mae
        .iter()
        .filter(|(_, e)| **e <= best * (1.0 + 0.05))
        .filter_map(|(id, _)| ranks.get(id))
        .collect();
    let observed = share_above(&good);
    // Null: each draw's good set from goodranks.
    let draws = read_draws(&out.join(NULL_DIR)).unwrap();
    let ids: Vec<u64> = draws.iter().map(|d| d.draw as u64).collect();
    let rows = read_goodranks(&out.join(NULL_DIR), &ids).unwrap().unwrap();
    let mut null = Vec::new();
    for d in &draws {
        let mut per: BTreeMap<&str, BTreeMap<String, i64>> = BTreeMap::new();
        for r in rows.iter().filter(|r| {
            r.draw == d.draw
                && r.level == "indicator"
                && r.kind == "coefficient"
                && r.error <= d.best_error * (1.0 + 0.05)
        }) {
            per.entry(&r.spec)
                .or_default()
                .insert(r.name.clone(), r.rank);
        }
        null.push(share_above(&per.values().collect::<Vec<_>>()));
    }
    let at_least = null
        .iter()
        .filter(|v| v.is_nan() || **v >= observed)
        .count();
    let p = (1 + at_least) as f64 / 10.0;
    let known: Vec<f64> = null.iter().copied().filter(|v| !v.is_nan()).collect();
    let mean = known.iter().sum::<f64>() / known.len() as f64;

    let b = batch(&out.join("report/null_claims.parquet"));
    let stmt = column_str(&b, "statement");
    let conclusions = batch(&out.join("report/conclusions.parquet"));
    assert_eq!(stmt, column_str(&conclusions, "statement"));
    let sources = column_str(&b, "source");
    let i = sources.iter().position(|s| s == "claim").unwrap();
    assert_eq!(column_str(&b, "not_tested")[i], "");
    assert_eq!(column_f64(&b, "observed")[i], observed);
    assert!((column_f64(&b, "null_mean")[i] - mean).abs() < 1e-12);
    assert_eq!(column_f64(&b, "p_unadjusted")[i], p);
    // Every automatic importance statement (native kinds here, as the run has no
    // permutation kind) is tested too, each p by the formula.
    let at = b
        .column_by_name("draws_at_least")
        .unwrap()
        .as_any()
        .downcast_ref::<arrow_array::Int64Array>()
        .unwrap();
    let why = column_str(&b, "not_tested");
    for (k, pv) in column_f64(&b, "p_unadjusted").iter().enumerate() {
        if sources[k] == "curves" {
            // The curves' sign claims: no curves under the null, said so.
            assert_eq!(why[k], "not tested: the null computes no curves");
            assert!(pv.is_nan());
            continue;
        }
        assert_eq!(why[k], "", "{}", stmt[k]);
        assert_eq!(*pv, (1 + at.value(k)) as f64 / 10.0, "{}", stmt[k]);
    }
    assert!(sources.iter().filter(|s| *s == "auto").count() >= 2);
    // Automatic conclusions: p adjusted by the family maximum, by its formula, never below
    // the unadjusted p; the listed claim has none.
    let fat = b
        .column_by_name("family_draws_at_least")
        .unwrap()
        .as_any()
        .downcast_ref::<arrow_array::Int64Array>()
        .unwrap();
    let (pu, pa) = (column_f64(&b, "p_unadjusted"), column_f64(&b, "p_adjusted"));
    for k in 0..stmt.len() {
        if sources[k] == "auto" && why[k].is_empty() {
            assert_eq!(pa[k], (1 + fat.value(k)) as f64 / 10.0, "{}", stmt[k]);
            assert!(pa[k] >= pu[k], "{}: {} < {}", stmt[k], pa[k], pu[k]);
        } else {
            assert!(pa[k].is_nan(), "{}", stmt[k]);
        }
    }
    assert!(pa[i].is_nan());
    let page = std::fs::read_to_string(out.join("report/index.html")).unwrap();
    assert!(page.contains("id=\"table-null_claims\""));
    assert!(page.contains("is not evidence of anything"));

    // A null written before goodranks existed: the report says so, no crash.
    std::fs::remove_dir_all(out.join(NULL_DIR).join("goodranks")).unwrap();
    forkmap(&["map".as_ref(), out.as_os_str(), "--quiet".as_ref()]);
    let b = batch(&out.join("report/null_claims.parquet"));
    let why = column_str(&b, "not_tested");
    assert!(!why.is_empty());
    assert!(why.iter().all(|w| w.contains("predates")), "{why:?}");
    assert!(column_f64(&b, "p_unadjusted").iter().all(|p| p.is_nan()));
    assert!(column_f64(&b, "p_adjusted").iter().all(|p| p.is_nan()));
    let page = std::fs::read_to_string(out.join("report/index.html")).unwrap();
    assert!(page.contains("Not available for this run"));
    // The null's other tables are still reported.
    assert!(out.join("report/null_summary.parquet").exists());
}

/// The toy panel with its outcome replaced by seeded normals (independent of every
/// indicator and of the units): a pure-noise panel, written under `dir`.
fn noise_panel(dir: &Path, seed: u64) -> std::path::PathBuf {
    let text = std::fs::read_to_string(crate::common::root().join("toy-panel/panel.csv")).unwrap();
    let mut lines = text.lines();
    let header = lines.next().unwrap();
    let at = header.split(',').position(|c| c == "hardship_pct").unwrap();
    let rows: Vec<&str> = lines.filter(|l| !l.is_empty()).collect();
    let z = crate::common::normals(rows.len(), seed);
    let mut out = format!("{header}\n");
    for (l, z) in rows.iter().zip(z) {
        let mut f: Vec<String> = l.split(',').map(String::from).collect();
        f[at] = format!("{:.4}", 20.0 + 5.0 * z);
        out.push_str(&f.join(","));
        out.push('\n');
    }
    let path = dir.join(format!("noise-{seed}.csv"));
    std::fs::write(&path, out).unwrap();
    path
}

/// Pure noise: over eight seeded noise outcomes (the null tests' 24-spec space, 19 draws,
/// so the smallest p is 0.05; about 3 s each), the automatic conclusions' adjusted p is
/// rarely at or below 0.05. Under the complete null the adjustment bounds, per family, the
/// chance that any of its statements gets p_adjusted <= 0.05 by about 5% (weak control),
/// and the report has at most four families (two rules on the primary kind of two levels),
/// so a repetition has at most about a 20% chance of any; the test allows two repetitions
/// in eight. Measured when written: the unadjusted p (printed for contrast) was <= 0.05 for
/// 7 of 92 tested statements in 3 of the 8 repetitions, the adjusted p for none, so the
/// unadjusted p in its place fails this test. Eight repetitions cannot measure the error
/// rate, and on this space most supports are driven by which names the pools and models
/// favour whatever the outcome, so the selection effect the adjustment removes is modest.
#[test]
fn on_pure_noise_automatic_conclusions_rarely_have_a_small_adjusted_p() {
    let tmp = tempfile::tempdir().unwrap();
    let root = crate::common::root();
    let (mut reps_any, mut adj_low, mut raw_low, mut tested) = (0, 0, 0, 0);
    for seed in [101u64, 202, 303, 404, 505, 606, 707, 808] {
        let csv = noise_panel(tmp.path(), seed);
        let cfg = tmp.path().join(format!("noise-{seed}.toml"));
        std::fs::write(
            &cfg,
            format!(
                "seed = {seed}\n[data]\nfile = \"{}\"\nunit = \"district\"\nwave = \"wave\"\noutcome = \"hardship_pct\"\nignore = [\"region\"]\ncodebook = \"{}/toy-panel/codebook.csv\"\n{}[null]\ndraws = 19\n",
                csv.display(),
                root.display(),
                crate::null::SPACE
            ),
        )
        .unwrap();
        let out = tmp.path().join(format!("run-{seed}"));
        forkmap(&[
            "run".as_ref(),
            cfg.as_os_str(),
            "--out".as_ref(),
            out.as_os_str(),
            "--no-curves".as_ref(),
            "--quiet".as_ref(),
        ]);
        let b = batch(&out.join("report/null_claims.parquet"));
        let (src, why) = (column_str(&b, "source"), column_str(&b, "not_tested"));
        let (pu, pa) = (column_f64(&b, "p_unadjusted"), column_f64(&b, "p_adjusted"));
        let auto: Vec<usize> = (0..src.len())
            .filter(|&k| src[k] == "auto" && why[k].is_empty())
            .collect();
        assert!(
            !auto.is_empty(),
            "seed {seed}: no automatic conclusion tested"
        );
        let a = auto.iter().filter(|&&k| pa[k] <= 0.05).count();
        let r = auto.iter().filter(|&&k| pu[k] <= 0.05).count();
        eprintln!(
            "noise seed {seed}: {} automatic conclusions tested, {a} with p_adjusted <= 0.05, {r} with p_unadjusted <= 0.05",
            auto.len()
        );
        reps_any += usize::from(a > 0);
        adj_low += a;
        raw_low += r;
        tested += auto.len();
    }
    eprintln!("noise: {adj_low} adjusted and {raw_low} unadjusted p <= 0.05 over {tested} tested automatic conclusions");
    assert!(
        reps_any <= 2,
        "{reps_any} of 8 noise repetitions have an automatic conclusion with p_adjusted <= 0.05"
    );
}
