//! The curves' subgroups and breakpoints against libraries outside the project
//! (tests/reference/shape.json, written by tests/reference/make_reference.py):
//! scikit-learn's `silhouette_score` (Euclidean) and `KMeans` (n_init = 20) on fixed small
//! datasets, and the hinge breakpoint against a brute-force numpy least-squares fit
//! (`numpy.linalg.lstsq` at each of the same 200 candidate breakpoints), and the chosen
//! shape (line, hinge, jump, flat) against the same rule computed with `numpy.linalg.lstsq`
//! on each model's own design matrix (the jump as [1, x, 1[x>t], (x-t)+], not as two
//! separate lines).

use crate::common::{cases, close, f64s, matrix, reference};
use forkmap::curves::{choose, fit_hinge, kmeans, silhouette};

fn labels(v: &serde_json::Value) -> Vec<usize> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap() as usize)
        .collect()
}

/// Two labellings describe the same partition (equal up to renaming the clusters).
fn same_partition(a: &[usize], b: &[usize]) -> bool {
    let mut map = std::collections::HashMap::new();
    let mut back = std::collections::HashMap::new();
    a.iter()
        .zip(b)
        .all(|(x, y)| *map.entry(*x).or_insert(*y) == *y && *back.entry(*y).or_insert(*x) == *x)
}

#[test]
fn silhouette_matches_scikit_learn() {
    let r = reference("shape.json");
    for (i, c) in cases(&r["silhouette"], 3, "silhouette").iter().enumerate() {
        let x = matrix(&c["x"]);
        let got = silhouette(x.view(), &labels(&c["labels"]));
        close(
            got,
            c["silhouette"].as_f64().unwrap(),
            1e-12,
            &format!("silhouette case {i}"),
        );
    }
}

#[test]
fn kmeans_matches_scikit_learn_on_separated_groups() {
    let r = reference("shape.json");
    for (i, c) in cases(&r["kmeans"], 3, "kmeans").iter().enumerate() {
        let x = matrix(&c["x"]);
        let k = c["k"].as_u64().unwrap() as usize;
        let (lab, wss) = kmeans(x.view(), k, 11);
        let want = labels(&c["labels"]);
        assert!(
            same_partition(&lab, &want),
            "case {i}: {lab:?} vs sklearn {want:?}"
        );
        close(
            wss,
            c["inertia"].as_f64().unwrap(),
            1e-9,
            &format!("kmeans inertia case {i}"),
        );
    }
}

#[test]
fn hinge_matches_a_brute_force_numpy_fit() {
    let r = reference("shape.json");
    for (i, c) in cases(&r["hinge"], 4, "hinge").iter().enumerate() {
        let (x, y) = (f64s(&c["x"]), f64s(&c["y"]));
        let h = fit_hinge(&x, &y).expect("a hinge fits");
        let what = |s: &str| format!("hinge case {i}: {s}");
        close(
            h.breakpoint,
            c["breakpoint"].as_f64().unwrap(),
            1e-9,
            &what("breakpoint"),
        );
        close(
            h.slope_left,
            c["slope_left"].as_f64().unwrap(),
            1e-7,
            &what("slope left"),
        );
        close(
            h.slope_right,
            c["slope_right"].as_f64().unwrap(),
            1e-7,
            &what("slope right"),
        );
        close(h.sse, c["sse"].as_f64().unwrap(), 1e-8, &what("sse"));
    }
}

#[test]
fn shape_choice_matches_numpy_lstsq() {
    let r = reference("shape.json");
    for c in cases(&r["choose"], 6, "choose") {
        let (x, y) = (f64s(&c["x"]), f64s(&c["y"]));
        let name = c["name"].as_str().unwrap();
        let s = choose(&x, &y, c["tol"].as_f64().unwrap());
        assert_eq!(s.kind.name(), c["kind"].as_str().unwrap(), "{name}: {s:?}");
        if s.kind.name() == "flat" {
            assert!(s.breakpoint.is_nan() && s.slope_left.is_nan(), "{name}");
            continue;
        }
        let what = |v: &str| format!("choose {name}: {v}");
        let opt = |k: &str| c[k].as_f64().unwrap_or(f64::NAN);
        if s.kind.bends() {
            close(s.breakpoint, opt("breakpoint"), 1e-8, &what("breakpoint"));
            close(s.jump, opt("jump"), 1e-7, &what("jump"));
        } else {
            assert!(s.breakpoint.is_nan() && c["breakpoint"].is_null(), "{name}");
        }
        close(s.slope_left, opt("slope_left"), 1e-7, &what("slope left"));
        close(
            s.slope_right,
            opt("slope_right"),
            1e-7,
            &what("slope right"),
        );
        close(s.sse, opt("sse"), 1e-8, &what("sse"));
        let bic = f64s(&c["bic"]);
        for (k, w) in ["line", "hinge", "jump"].iter().enumerate() {
            close(s.bic[k], bic[k], 1e-7, &what(&format!("bic {w}")));
        }
    }
}
