//! Shared helpers for the integration tests.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

/// The workspace root.
pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

/// Folder with the reference JSON files.
pub fn reference_dir() -> PathBuf {
    match std::env::var_os("FORKMAP_REFERENCE_DIR") {
        Some(d) => PathBuf::from(d),
        None => root().join("tests/reference"),
    }
}

pub fn reference(name: &str) -> serde_json::Value {
    let p = reference_dir().join(name);
    let text =
        std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("reading {}: {e}", p.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("parsing {}: {e}", p.display()))
}

pub fn f64s(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

pub fn matrix(v: &serde_json::Value) -> ndarray::Array2<f64> {
    let rows: Vec<Vec<f64>> = v.as_array().expect("rows").iter().map(f64s).collect();
    let (n, p) = (rows.len(), rows[0].len());
    ndarray::Array2::from_shape_vec((n, p), rows.into_iter().flatten().collect()).expect("shape")
}

/// Assert |a - b| <= tol * |b|: `tol` is a relative tolerance, whatever the size of `b`
/// (what the README's reference table means by a bare tolerance). A reference value of 0
/// must then be met exactly: use [`close_to_scale`] where a vector has zeros.
pub fn close(a: f64, b: f64, tol: f64, what: &str) {
    assert!(
        a.is_finite() && (a - b).abs() <= tol * b.abs(),
        "{what}: {a} vs reference {b} (relative tol {tol})"
    );
}

/// Assert |a - b| <= tol * scale, with `scale` the size of the compared quantity as a
/// whole (e.g. the largest |coefficient| of a fit, or 1 for an identity matrix): for
/// entries that can be 0 or tiny beside the others.
pub fn close_to_scale(a: f64, b: f64, tol: f64, scale: f64, what: &str) {
    assert!(scale > 0.0, "{what}: scale {scale} must be positive");
    assert!(
        a.is_finite() && (a - b).abs() <= tol * scale,
        "{what}: {a} vs reference {b} (tol {tol} x scale {scale})"
    );
}

/// The largest |value| of a reference vector (the scale for [`close_to_scale`]).
pub fn scale_of(v: &[f64]) -> f64 {
    v.iter().fold(0.0f64, |m, x| m.max(x.abs()))
}

/// Pairs of two sequences that must have the same, non-zero length (a zip alone stops at
/// the shorter one and would compare nothing past it).
pub fn pairs<A: Clone, B: Clone>(a: &[A], b: &[B], what: &str) -> Vec<(A, B)> {
    assert_eq!(a.len(), b.len(), "{what}: lengths differ");
    assert!(!a.is_empty(), "{what}: nothing to compare");
    a.iter().cloned().zip(b.iter().cloned()).collect()
}

/// The reference cases under `v`: an array that must hold at least `min` entries.
pub fn cases<'a>(v: &'a serde_json::Value, min: usize, what: &str) -> &'a Vec<serde_json::Value> {
    let c = v
        .as_array()
        .unwrap_or_else(|| panic!("{what}: reference cases missing"));
    assert!(
        c.len() >= min,
        "{what}: {} reference cases, expected at least {min}",
        c.len()
    );
    c
}

/// The toy panel loaded through the quick config, with the config.
pub fn toy() -> forkmap::run::Prepared {
    forkmap::run::prepare(&root().join("configs/toy-quick.toml")).expect("quick config prepares")
}

/// A prepared sweep from config text whose data path is relative to the workspace root.
pub fn prepared(text: &str) -> forkmap::run::Prepared {
    let cfg = forkmap::config::Config::from_toml(text, &root(), "<test>").expect("config");
    forkmap::run::prepare_config(cfg).expect("prepare")
}

/// Every result of a sweep, sorted by spec (the sweep emits them in completion order).
pub fn results(sweep: &forkmap::sweep::Sweep) -> Vec<forkmap::sweep::SpecResult> {
    let out = std::sync::Mutex::new(Vec::new());
    sweep.run(&|r| out.lock().unwrap().push(r));
    let mut v = out.into_inner().unwrap();
    v.sort_by_key(|r| r.spec);
    v
}

/// An in-memory panel (unit column `u`, outcome `y`) swept under a config's choices with
/// 5 grouped folds and seed 5; `importance` as given, `budget` bytes of shared draws.
pub fn sweep_mem(
    panel: &forkmap::panel::Panel,
    choices: &str,
    importance: Option<forkmap::importance::ImportanceSection>,
    budget: usize,
) -> (
    forkmap::space::ChoiceSpace,
    forkmap::folds::FoldPlan,
    Vec<forkmap::sweep::SpecResult>,
) {
    let text = format!("seed = 5\n[data]\nfile = \"unused.csv\"\nunit = \"u\"\noutcome = \"y\"\n[folds]\nk = 5\n{choices}");
    let cfg = forkmap::config::Config::from_toml(&text, Path::new("."), "<test>").unwrap();
    let space = forkmap::space::ChoiceSpace::build(&cfg, panel).unwrap();
    let folds = forkmap::folds::FoldPlan::new(panel, &cfg.folds, cfg.seed).unwrap();
    let mut s = forkmap::sweep::Sweep::new(panel, &space, &folds, cfg.seed, None).unwrap();
    s.draws_budget = budget;
    s.importance = importance;
    let res = results(&s);
    (space, folds, res)
}

/// A seeded standard normal (Box-Muller on a SplitMix64 stream): test data only.
pub fn normals(n: usize, seed: u64) -> Vec<f64> {
    let mut s = seed;
    let mut next = || {
        s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = s;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    };
    (0..n)
        .map(|_| {
            let (u1, u2) = (1.0 - next(), next());
            (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
        })
        .collect()
}

/// Files in `dir` whose names pass `keep` (0 when the folder is missing): how far a run
/// that is about to be killed has written.
pub fn files_in(dir: &Path, keep: impl Fn(&str) -> bool) -> usize {
    std::fs::read_dir(dir)
        .map(|r| {
            r.filter(|e| {
                e.as_ref()
                    .map(|e| keep(&e.file_name().to_string_lossy()))
                    .unwrap_or(false)
            })
            .count()
        })
        .unwrap_or(0)
}

/// A config on the committed toy panel as a `&'static str`: `seed = SEED`, the panel's
/// `[data]` section (paths relative to the repository root, as `prepared` reads them), then
/// `rest` (the sections a test varies). One place for the data section the tests share.
macro_rules! toy_config {
    ($seed:literal, $rest:literal) => {
        concat!(
            "seed = ",
            $seed,
            "\n[data]\nfile = \"toy-panel/panel.csv\"\nunit = \"district\"\nwave = \"wave\"\n",
            "outcome = \"hardship_pct\"\noutcome_kind = \"percent\"\nignore = [\"region\"]\n",
            "codebook = \"toy-panel/codebook.csv\"\n",
            $rest
        )
    };
}

/// `forkmap ARGS...` with the built binary; its output.
pub fn forkmap<S: AsRef<std::ffi::OsStr>>(args: &[S]) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(args)
        .output()
        .expect("the forkmap binary starts")
}

/// The arguments of `forkmap run CFG --out OUT --quiet --threads 2 EXTRA...`.
fn run_args(cfg: &Path, out: &Path, extra: &[&str]) -> Vec<std::ffi::OsString> {
    let mut a: Vec<std::ffi::OsString> = vec!["run".into(), cfg.into(), "--out".into()];
    a.push(out.into());
    a.extend(["--quiet", "--threads", "2"].map(Into::into));
    a.extend(extra.iter().map(Into::into));
    a
}

/// `forkmap run CFG --out OUT --quiet --threads 2 EXTRA...`; its output.
pub fn run_cli(cfg: &Path, out: &Path, extra: &[&str]) -> std::process::Output {
    forkmap(&run_args(cfg, out, extra))
}

/// The output's stdout, after asserting the command succeeded (else its exit code, stdout
/// and stderr in the panic).
pub fn ok(o: &std::process::Output) -> String {
    assert!(
        o.status.success(),
        "exit {:?}\n{}\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// The same run started in the background with its output discarded (to be killed).
pub fn spawn_run(cfg: &Path, out: &Path, extra: &[&str]) -> std::process::Child {
    std::process::Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(run_args(cfg, out, extra))
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .expect("the forkmap binary starts")
}

/// A panel with `rows_per_unit[u]` waves for unit `u` (unbalanced when they differ): the
/// outcome is the row index, two indicators `a`, `b` distinct on every row.
pub fn unit_panel(rows_per_unit: &[usize]) -> forkmap::panel::Panel {
    let mut units = Vec::new();
    let mut waves = Vec::new();
    for (u, &r) in rows_per_unit.iter().enumerate() {
        for w in 0..r {
            units.push(format!("u{u}"));
            waves.push(Some(format!("{w}")));
        }
    }
    let n = units.len();
    forkmap::panel::Panel::new(
        units,
        waves,
        ndarray::Array1::from_iter((0..n).map(|i| i as f64)),
        ndarray::Array2::from_shape_fn((n, 2), |(i, j)| (i * 2 + j) as f64),
        vec!["a".into(), "b".into()],
    )
    .expect("a valid panel")
}
