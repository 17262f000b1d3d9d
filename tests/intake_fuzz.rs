//! Fuzzing the intake: mutated and random config texts and data files go through
//! everything `run` checks before it writes (config parsing, panel reading, choice space,
//! folds). Each must give `Ok` or an error with a message, never a panic.
//!
//! The default case counts keep the test suite quick; fuzz longer with e.g.
//! `PROPTEST_CASES=20000 cargo test --release -p forkmap --test forkmap-tests intake_fuzz`.
//! A failure prints the minimal input that panicked (proptest shrinks it) and is saved
//! under `tests/proptest-regressions/` to be replayed on every later run.

use forkmap::config::Config;
use proptest::prelude::*;
use std::path::Path;

const GOOD_CSV: &str = "unit,wave,y,x1,x2,x3\n\
u0,0,2.5,0.5,0.25,0.75\nu0,1,2.9,3.5,1.25,5.75\n\
u1,0,3.1,7.5,5.25,3.75\nu1,1,3.6,10.5,6.25,8.75\n\
u2,0,1.9,3.5,3.25,6.75\nu2,1,2.2,6.5,4.25,11.75\n\
u3,0,4.4,10.5,1.25,9.75\nu3,1,4.1,2.5,2.25,1.75\n\
u4,0,2.0,6.5,6.25,12.75\nu4,1,2.8,9.5,0.25,4.75\n";

const GOOD_CFG: &str = "seed = 7\n[data]\nfile = \"panel.csv\"\nunit = \"unit\"\nwave = \"wave\"\n\
outcome = \"y\"\n[folds]\nk = 3\n[choices]\nfill = [\"mean\", \"knn\"]\n\
compress = [\"none\", \"pca\", \"nmf\"]\nscale = [\"minmax\", \"standardise\"]\n\
model = [\"ridge\", \"forest\"]\nweighting = [\"rows\", \"high\"]\n[grid.pca]\nk = [2]\n\
[grid.nmf]\nk = [2]\n[grid.forest]\ntrees = [5]\n[importance]\nwithin = 0.1\n";

/// Run the whole intake on a config text and a data file's bytes.
fn intake(dir: &Path, cfg: &str, csv: &[u8]) {
    std::fs::write(dir.join("panel.csv"), csv).unwrap();
    let parsed = Config::from_toml(cfg, dir, "fuzz.toml");
    if let Ok(c) = parsed {
        match forkmap::run::prepare_config(c) {
            Ok(p) => {
                // What run and plan derive from a prepared config must not panic either.
                let _ = forkmap::plan::warnings(&p);
                let _ = forkmap::shard::owners(&p.space, &p.panel, 3);
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
    } else if let Err(e) = parsed {
        assert!(!e.to_string().is_empty());
    }
}

/// An edit of a text: replace, insert or delete a short run of bytes at a position.
fn mutate(base: &[u8], edits: &[(usize, u8, Vec<u8>)]) -> Vec<u8> {
    let mut b = base.to_vec();
    for (at, kind, bytes) in edits {
        let at = if b.is_empty() { 0 } else { at % (b.len() + 1) };
        match kind % 3 {
            0 => {
                let end = (at + bytes.len()).min(b.len());
                b.splice(at..end, bytes.iter().copied());
            }
            1 => {
                b.splice(at..at, bytes.iter().copied());
            }
            _ => {
                let end = (at + bytes.len().max(1)).min(b.len());
                b.drain(at..end);
            }
        }
    }
    b
}

/// Bytes that matter to CSV and TOML parsers, plus anything.
fn token() -> impl Strategy<Value = Vec<u8>> {
    prop_oneof![
        prop::collection::vec(any::<u8>(), 0..4),
        prop::sample::select(vec![
            b",".to_vec(),
            b"\n".to_vec(),
            b"\r\n".to_vec(),
            b"\"".to_vec(),
            b"NaN".to_vec(),
            b"inf".to_vec(),
            b"-1e308".to_vec(),
            b"1e400".to_vec(),
            b"".to_vec(),
            b"=".to_vec(),
            b"[".to_vec(),
            b"]".to_vec(),
            b"0".to_vec(),
            b"-".to_vec(),
            b"\xEF\xBB\xBF".to_vec(),
            b"\xFF\xFE".to_vec(),
            b"u0".to_vec(),
            b"x1".to_vec(),
            b"[[exclude]]\nmodel = [\"ridge\"]\n".to_vec(),
            b"k = 0\n".to_vec(),
            b"k = 99999999999\n".to_vec(),
        ]),
    ]
}

fn edits() -> impl Strategy<Value = Vec<(usize, u8, Vec<u8>)>> {
    prop::collection::vec((any::<usize>(), any::<u8>(), token()), 1..6)
}

fn cases(default: u32) -> ProptestConfig {
    let n = std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default);
    ProptestConfig {
        cases: n,
        ..ProptestConfig::default()
    }
}

proptest! {
    #![proptest_config(cases(300))]

    #[test]
    fn mutated_data_files_never_panic(e in edits()) {
        let tmp = tempfile::tempdir().unwrap();
        intake(tmp.path(), GOOD_CFG, &mutate(GOOD_CSV.as_bytes(), &e));
    }

    #[test]
    fn mutated_configs_never_panic(e in edits()) {
        let tmp = tempfile::tempdir().unwrap();
        let cfg = mutate(GOOD_CFG.as_bytes(), &e);
        intake(tmp.path(), &String::from_utf8_lossy(&cfg), GOOD_CSV.as_bytes());
    }

    #[test]
    fn random_data_files_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..300)) {
        let tmp = tempfile::tempdir().unwrap();
        intake(tmp.path(), GOOD_CFG, &bytes);
    }
}

/// The unmutated inputs pass the intake (so the mutations start from a valid point).
#[test]
fn the_fuzzing_seed_inputs_are_valid() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(tmp.path().join("panel.csv"), GOOD_CSV).unwrap();
    let c = Config::from_toml(GOOD_CFG, tmp.path(), "fuzz.toml").unwrap();
    let p = forkmap::run::prepare_config(c).unwrap();
    assert!(p.space.specs.len() >= 20, "{}", p.space.specs.len());
}
