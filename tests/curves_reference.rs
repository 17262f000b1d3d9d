//! The curves' subgroups and breakpoints against libraries outside the project
//! (tests/reference/shape.json, written by tests/reference/make_reference.py):
//! scikit-learn's `silhouette_score` (Euclidean) and `KMeans` (n_init = 20) on fixed small
//! datasets, and the hinge breakpoint against a brute-force numpy least-squares fit
//! (`numpy.linalg.lstsq` at each of the same 200 candidate breakpoints), and the chosen
//! shape (line, hinge, jump, flat) against the same rule computed with `numpy.linalg.lstsq`
//! on each model's own design matrix (the jump as [1, x, 1[x>t], (x-t)+], not as two
//! separate lines). The k-means and the gap statistic are checked against scikit-learn's
//! `KMeans` with 50 starts (tests/reference/gap.json, shape.json `kmeans_any`): see the
//! tests for the sources and tolerances.

use crate::common::{cases, close, close_to_scale, f64s, matrix, reference};
use forkmap::curves::{
    choose, choose_k_given, fit_hinge, gap_points, kmeans, reference_sets, silhouette,
};

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
        let inertia = c["inertia"].as_f64().unwrap();
        assert!(wss <= inertia * (1.0 + 1e-9), "case {i}: {wss} > {inertia}");
        close(wss, inertia, 1e-9, &format!("kmeans inertia case {i}"));
    }
}

/// On data without well-separated groups both searches are heuristics (Lloyd finds local
/// optima; neither is the global optimum every time): the best of our 50 k-means++ starts
/// is compared with scikit-learn's `KMeans(n_init=50, algorithm="lloyd", tol=0)`
/// (shape.json `kmeans_any`, and the gap check's uniform reference data sets in gap.json),
/// k = 2..5, 252 cases. Measured (this commit): ours lower in 23 cases, higher in 30, by
/// at most 1.7%. Asserted: never more than 2% above, and at least as good (within 1e-9) in
/// at least 80% of the cases. Not the strict "at most scikit-learn's inertia", which
/// fails here by the luck of the starts (see the separated-groups test for that one).
#[test]
fn kmeans_is_near_scikit_learn_on_unseparated_data() {
    let r = reference("shape.json");
    let g = reference("gap.json");
    // (what, ours / scikit-learn)
    let mut ratio: Vec<(String, f64)> = Vec::new();
    for c in cases(&r["kmeans_any"], 3, "kmeans_any") {
        let x = matrix(&c["x"]);
        let name = c["name"].as_str().unwrap();
        for k in 2..=5usize {
            let inertia = c["inertia"][k.to_string()].as_f64().unwrap();
            let (lab, wss) = kmeans(x.view(), k, 11);
            assert_eq!(lab.len(), x.nrows());
            ratio.push((format!("{name}, k = {k}"), wss / inertia));
        }
    }
    for c in cases(&g["cases"], 3, "gap") {
        let name = c["name"].as_str().unwrap();
        for (b, z) in c["reference"].as_array().unwrap().iter().enumerate() {
            let z = matrix(z);
            let want = f64s(&c["reference_log_w"][b]);
            for (j, lw) in want.iter().enumerate().skip(1) {
                let (_, wss) = kmeans(z.view(), j + 1, 11);
                ratio.push((
                    format!("{name} reference {b}, k = {}", j + 1),
                    wss / lw.exp(),
                ));
            }
        }
    }
    assert_eq!(ratio.len(), 252);
    let worse = ratio.iter().filter(|(_, q)| *q > 1.0 + 1e-9).count();
    let better = ratio.iter().filter(|(_, q)| *q < 1.0 - 1e-9).count();
    let (what, max) = ratio
        .iter()
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .cloned()
        .unwrap();
    eprintln!("kmeans vs scikit-learn: {better} lower, {worse} higher, max ratio {max} ({what})");
    assert!(max <= 1.02, "{what}: ours / scikit-learn = {max}");
    assert!(
        worse * 5 <= ratio.len(),
        "{worse} of {} cases above scikit-learn's inertia",
        ratio.len()
    );
}

/// The gap statistic (Tibshirani, Walther & Hastie 2001, JRSS B 63(2); formulas recalled
/// from memory) against numpy + scikit-learn (tests/reference/gap.json: three fixed data
/// sets, each with 20 reference data sets drawn uniformly over the box of its
/// principal-component scores by numpy's SVD; W(k) = `KMeans(n_init=50)` inertia).
/// - The statistic and the rule on the same sums of squares: [`gap_points`] fed
///   scikit-learn's log W(k) and log W*_b(k) gives numpy's Gap(k) and s(k) = sd x
///   sqrt(1 + 1/B) within 1e-12 (absolute) and the same k (smallest k with
///   Gap(k) >= Gap(k+1) - s(k+1)).
/// - End to end on the same reference draws ([`choose_k_given`], our k-means): the same
///   chosen k, and Gap(k), s(k) within 0.02 (absolute; k-means' search differs on uniform
///   data, see the test above; measured largest difference 0.007, printed).
/// - Our own reference box ([`reference_sets`]) spans numpy's principal-component widths.
#[test]
fn gap_statistic_matches_numpy_and_scikit_learn() {
    let r = reference("gap.json");
    let mut chosen = Vec::new();
    let mut largest: f64 = 0.0;
    for c in cases(&r["cases"], 3, "gap") {
        let name = c["name"].as_str().unwrap();
        let (lw, gap, se) = (f64s(&c["log_w"]), f64s(&c["gap"]), f64s(&c["se"]));
        let want_k = c["k"].as_u64().unwrap() as usize;
        let ref_lw: Vec<Vec<f64>> = c["reference_log_w"]
            .as_array()
            .unwrap()
            .iter()
            .map(f64s)
            .collect();
        let (pts, k) = gap_points(&lw, &ref_lw);
        assert_eq!(k, want_k, "{name}: chosen k from scikit-learn's W");
        for (j, pt) in pts.iter().enumerate() {
            let what = |s: &str| format!("{name}, k = {}: {s}", pt.k);
            close_to_scale(pt.gap, gap[j], 1e-12, 1.0, &what("Gap"));
            close_to_scale(pt.se, se[j], 1e-12, 1.0, &what("s"));
        }
        let x = matrix(&c["x"]);
        let refs: Vec<_> = c["reference"]
            .as_array()
            .unwrap()
            .iter()
            .map(matrix)
            .collect();
        let got = choose_k_given(x.view(), 5, &refs);
        assert_eq!(got.points.len(), lw.len(), "{name}: ks computed");
        for (j, pt) in got.points.iter().enumerate() {
            let what = |s: &str| format!("{name}, k = {} end to end: {s}", pt.k);
            largest = largest
                .max((pt.gap - gap[j]).abs())
                .max((pt.se - se[j]).abs());
            close_to_scale(pt.gap, gap[j], 0.02, 1.0, &what("Gap"));
            close_to_scale(pt.se, se[j], 0.02, 1.0, &what("s"));
        }
        assert_eq!(got.k, want_k, "{name}: chosen k end to end");
        chosen.push(got.k);
        if name == "three groups" {
            let want: Vec<usize> = (0..36).map(|i| i / 12).collect();
            assert!(
                same_partition(&got.labels, &want),
                "{name}: {:?}",
                got.labels
            );
        }
        // Our draws (50 x n rows) fill the principal-component box: each column's range is
        // within [0.98, 1 + 1e-9] of the box width numpy's SVD gives (sorted: the order and
        // signs of components differ).
        let ours = reference_sets(x.view(), 5).expect("reference sets");
        let mut widths: Vec<f64> = (0..x.ncols())
            .map(|j| {
                let v = ours.iter().flat_map(|z| z.column(j).to_vec());
                let (lo, hi) = v.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), t| {
                    (a.min(t), b.max(t))
                });
                hi - lo
            })
            .collect();
        widths.sort_by(f64::total_cmp);
        for (w, want) in widths.iter().zip(f64s(&c["box_widths"])) {
            assert!(
                *w <= want * (1.0 + 1e-9) && *w >= 0.98 * want,
                "{name}: box width {w} vs numpy {want}"
            );
        }
    }
    eprintln!("gap end to end: largest |difference| in Gap or s: {largest}");
    // The cases cover one, two and three groups.
    chosen.sort_unstable();
    assert_eq!(chosen, vec![1, 2, 3]);
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
