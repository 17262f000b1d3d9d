//! The tree's tests, and the grower as it was before presorting, which the presorted
//! grower is checked against bit for bit.

use super::draw::FeatureDraw;
use super::fitted::{Node, Tree};
use super::grower::Lists;
use super::{grow, Candidates, Grower, Presorted, TreeParams, FEATURE_THRESHOLD};
use crate::models::Predictor;
use ndarray::{array, ArrayView1, ArrayView2};
use rand::Rng;

/// The grower as it was before presorting (a sort of the node's rows per tried indicator
/// at every node), kept to test that the presorted grower gives the same trees bit for bit.
fn grow_per_node_sort<R: Rng>(
    x: ArrayView2<f64>,
    y: ArrayView1<f64>,
    w: &[f64],
    rows: Vec<usize>,
    params: TreeParams,
    mut cand: Candidates<R>,
) -> Tree {
    let p = x.ncols();
    let mut nodes: Vec<Node> = Vec::new();
    // (node index, rows, depth)
    let mut stack: Vec<(usize, Vec<usize>, usize)> = Vec::new();
    let leaf_value = |rs: &[usize]| {
        let sw: f64 = rs.iter().map(|&i| w[i]).sum();
        let swy: f64 = rs.iter().map(|&i| w[i] * y[i]).sum();
        if sw > 0.0 {
            swy / sw
        } else {
            0.0
        }
    };
    nodes.push(Node {
        feature: usize::MAX,
        threshold: 0.0,
        left: 0,
        right: 0,
        value: leaf_value(&rows),
        gain: 0.0,
    });
    let mut reach: Vec<u32> = vec![rows.len() as u32];
    stack.push((0, rows, 0));
    let mut order: Vec<usize> = Vec::new();
    let mut features: Vec<usize> = (0..p).collect();
    let mut draw = FeatureDraw::new(p);
    while let Some((ni, rs, depth)) = stack.pop() {
        let n = rs.len();
        if depth >= params.depth || n < 2 * params.min_leaf {
            continue;
        }
        let sw: f64 = rs.iter().map(|&i| w[i]).sum();
        let swy: f64 = rs.iter().map(|&i| w[i] * y[i]).sum();
        if sw <= 0.0 {
            continue;
        }
        let parent_score = swy * swy / sw;
        let mut extra_thr: Vec<f64> = Vec::new();
        match &mut cand {
            Candidates::All => {}
            Candidates::Sample { m, rng } => {
                let varies = |f: usize| {
                    let lo = rs.iter().map(|&i| x[[i, f]]).fold(f64::INFINITY, f64::min);
                    let hi = rs
                        .iter()
                        .map(|&i| x[[i, f]])
                        .fold(f64::NEG_INFINITY, f64::max);
                    hi > lo + FEATURE_THRESHOLD
                };
                draw.draw(*rng, *m, varies, &mut features)
            }
            Candidates::Extra { m, rng } => {
                let mut span = vec![(0.0, 0.0); p];
                let varies = |f: usize| {
                    let lo = rs.iter().map(|&i| x[[i, f]]).fold(f64::INFINITY, f64::min);
                    let hi = rs
                        .iter()
                        .map(|&i| x[[i, f]])
                        .fold(f64::NEG_INFINITY, f64::max);
                    span[f] = (lo, hi);
                    hi > lo + FEATURE_THRESHOLD
                };
                draw.draw(*rng, *m, varies, &mut features);
                extra_thr = features
                    .iter()
                    .map(|&f| {
                        let (lo, hi) = span[f];
                        let u: f64 = rng.gen();
                        lo + u * (hi - lo)
                    })
                    .collect();
            }
        }
        let mut best: Option<(f64, usize, f64)> = None; // (gain, feature, threshold)
        for (fpos, &f) in features.iter().enumerate() {
            if !extra_thr.is_empty() {
                let thr = extra_thr[fpos];
                if thr.is_nan() {
                    continue;
                }
                let (mut lw, mut lwy, mut ln) = (0.0, 0.0, 0usize);
                for &i in &rs {
                    if x[[i, f]] <= thr {
                        lw += w[i];
                        lwy += w[i] * y[i];
                        ln += 1;
                    }
                }
                let rw = sw - lw;
                if ln < params.min_leaf || n - ln < params.min_leaf || lw <= 0.0 || rw <= 0.0 {
                    continue;
                }
                let rwy = swy - lwy;
                let gain = lwy * lwy / lw + rwy * rwy / rw - parent_score;
                if best.is_none_or(|(g, _, _)| gain > g) {
                    best = Some((gain, f, thr));
                }
                continue;
            }
            order.clear();
            order.extend_from_slice(&rs);
            order.sort_by(|&a, &b| x[[a, f]].total_cmp(&x[[b, f]]));
            let (mut lw, mut lwy) = (0.0, 0.0);
            for k in 0..n - 1 {
                let i = order[k];
                lw += w[i];
                lwy += w[i] * y[i];
                let left_n = k + 1;
                if left_n < params.min_leaf {
                    continue;
                }
                if n - left_n < params.min_leaf {
                    break;
                }
                let (a, b) = (x[[i, f]], x[[order[k + 1], f]]);
                if b <= a + FEATURE_THRESHOLD {
                    continue;
                }
                let rw = sw - lw;
                if lw <= 0.0 || rw <= 0.0 {
                    continue;
                }
                let rwy = swy - lwy;
                let gain = lwy * lwy / lw + rwy * rwy / rw - parent_score;
                if best.is_none_or(|(g, _, _)| gain > g + 1e-12 * parent_score.abs().max(1e-300)) {
                    let mut thr = a + (b - a) / 2.0;
                    if thr >= b {
                        thr = a;
                    }
                    best = Some((gain, f, thr));
                }
            }
        }
        let Some((gain, f, thr)) = best else { continue };
        if gain <= 0.0 {
            continue;
        }
        let (l, r): (Vec<usize>, Vec<usize>) = rs.iter().partition(|&&i| x[[i, f]] <= thr);
        let li = nodes.len();
        nodes.push(Node {
            feature: usize::MAX,
            threshold: 0.0,
            left: 0,
            right: 0,
            value: leaf_value(&l),
            gain: 0.0,
        });
        let ri = nodes.len();
        nodes.push(Node {
            feature: usize::MAX,
            threshold: 0.0,
            left: 0,
            right: 0,
            value: leaf_value(&r),
            gain: 0.0,
        });
        nodes[ni] = Node {
            feature: f,
            threshold: thr,
            left: li as u32,
            right: ri as u32,
            value: nodes[ni].value,
            gain,
        };
        reach.extend([l.len() as u32, r.len() as u32]);
        // Right pushed first so the left subtree is grown first (deterministic order).
        stack.push((ri, r, depth + 1));
        stack.push((li, l, depth + 1));
    }
    Tree::new(nodes, &reach)
}

#[test]
fn depth_two_tree_matches_hand_computed_splits() {
    // One indicator, outcome steps at 3.5 and again at 6.5:
    // x = 1..8, y = [1,1,1,5,5,5,9,9]. Root: the best split by squared error is
    // between 3 and 4 (left mean 1; right [5,5,5,9,9]) vs between 6 and 7 (left
    // [1,1,1,5,5,5], right 9). SSE: x<=3.5 -> 0 + 19.2 = 19.2; x<=6.5 -> 24 + 0 = 24.
    // So root 3.5, then the right child splits at 6.5; the left child is pure.
    let x = array![[1.0], [2.0], [3.0], [4.0], [5.0], [6.0], [7.0], [8.0]];
    let y = array![1.0, 1.0, 1.0, 5.0, 5.0, 5.0, 9.0, 9.0];
    let w = vec![1.0; 8];
    let t = grow::<rand_chacha::ChaCha8Rng>(
        x.view(),
        y.view(),
        &w,
        (0..8).collect(),
        TreeParams {
            depth: 2,
            min_leaf: 1,
        },
        Candidates::All,
    );
    assert_eq!(t.splits(), vec![(0, 3.5), (0, 6.5)]);
    assert_eq!(
        t.predict(array![[0.0], [5.0], [100.0]].view()),
        array![1.0, 5.0, 9.0]
    );
}

/// The presorted grower gives the trees of the per-node-sort grower, bit for bit, for
/// every candidate rule, with weights, bootstrap-like row subsets and tied values.
#[test]
fn presorted_grower_equals_per_node_sort_bit_for_bit() {
    use rand::{Rng, SeedableRng};
    let mut g = rand_chacha::ChaCha8Rng::seed_from_u64(42);
    let (mut split, mut total) = (0, 0);
    for case in 0..72 {
        // Every sixth case above 128 rows (past the bitset in registers).
        let n = if case % 6 == 5 {
            129 + case
        } else {
            20 + case % 60
        };
        let p = 1 + case % 9;
        // Every third case on a coarse grid, so many values tie; every sixth (from the
        // fifth) in clusters of values 4e-8 apart, so values closer than
        // FEATURE_THRESHOLD tie with their neighbours but not always with each other.
        let x = ndarray::Array2::from_shape_fn((n, p), |_| {
            let v: f64 = g.gen_range(-3.0..3.0);
            if case % 3 == 0 {
                v.round()
            } else if case % 6 == 4 {
                v.round() + f64::from(g.gen_range(0..4u8)) * 4e-8
            } else {
                v
            }
        });
        let y = ndarray::Array1::from_shape_fn(n, |i| x[[i, 0]].sin() + g.gen_range(0.0..0.5));
        let w: Vec<f64> = (0..n)
            .map(|_| {
                if g.gen_bool(0.2) {
                    0.0
                } else {
                    g.gen_range(1..4) as f64
                }
            })
            .collect();
        let rows: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
        let params = TreeParams {
            depth: if case % 4 == 2 { 3 } else { usize::MAX },
            min_leaf: 1 + case % 4,
        };
        let pre = Presorted::new(x.view());
        // Each candidate rule with the lists it picks, and a forest's with each kind.
        let mut kinds = vec![(0, None), (1, None), (1, Some(Lists::Every)), (2, None)];
        if n <= 128 {
            kinds.push((1, Some(Lists::Bits)));
        }
        for (rule, forced) in kinds {
            let seed = 1000 + case as u64;
            let (mut r1, mut r2) = (
                rand_chacha::ChaCha8Rng::seed_from_u64(seed),
                rand_chacha::ChaCha8Rng::seed_from_u64(seed),
            );
            let m = 1 + p / 2;
            let (c1, c2) = match rule {
                0 => (Candidates::All, Candidates::All),
                1 => (
                    Candidates::Sample { m, rng: &mut r1 },
                    Candidates::Sample { m, rng: &mut r2 },
                ),
                _ => (
                    Candidates::Extra { m, rng: &mut r1 },
                    Candidates::Extra { m, rng: &mut r2 },
                ),
            };
            let mut grower = Grower::new(&pre);
            grower.forced_lists = forced;
            let a = grower.grow(y.view(), &w, rows.clone(), params, c1);
            let b = grow_per_node_sort(x.view(), y.view(), &w, rows.clone(), params, c2);
            assert_eq!(
                format!("{:?}", a.nodes),
                format!("{:?}", b.nodes),
                "case {case}, rule {rule}, lists {forced:?} (n {n})"
            );
            split += (a.nodes.len() > 1) as usize;
            total += 1;
        }
    }
    // The comparison means something only if most trees split.
    assert!(split * 10 >= total * 9, "{split} of {total} trees split");
}

/// A forest trying every indicator grows with [`Candidates::All`] instead of drawing all
/// p (models/forest.rs): the same trees bit for bit, with weights, ties, an indicator
/// constant everywhere and ones constant at small nodes, on both sides of 128 rows.
#[test]
fn trying_all_equals_drawing_all_bit_for_bit() {
    use rand::{Rng, SeedableRng};
    let mut g = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    let (mut split, mut total) = (0, 0);
    for case in 0..24 {
        let n = if case % 3 == 2 {
            140 + case
        } else {
            30 + 3 * case
        };
        let p = 2 + case % 7;
        let x = ndarray::Array2::from_shape_fn((n, p), |(_, f)| {
            let v: f64 = g.gen_range(-3.0..3.0);
            match f % 3 {
                0 => v,
                1 => v.round(),
                _ if f == 2 => 1.0,
                _ => (v / 2.0).round() + f64::from(g.gen_range(0..3u8)) * 4e-8,
            }
        });
        let y = ndarray::Array1::from_shape_fn(n, |i| x[[i, 0]].sin() + g.gen_range(0.0..0.5));
        let w: Vec<f64> = (0..n)
            .map(|_| {
                if g.gen_bool(0.3) {
                    0.0
                } else {
                    g.gen_range(1..4) as f64
                }
            })
            .collect();
        let rows: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
        let params = TreeParams {
            depth: usize::MAX,
            min_leaf: 1 + 4 * (case % 2),
        };
        let pre = Presorted::new(x.view());
        let mut r = rand_chacha::ChaCha8Rng::seed_from_u64(case as u64);
        let mut grower = Grower::new(&pre);
        let a = grower.grow(
            y.view(),
            &w,
            rows.clone(),
            params,
            Candidates::<rand_chacha::ChaCha8Rng>::All,
        );
        let b = grower.grow(
            y.view(),
            &w,
            rows,
            params,
            Candidates::Sample { m: p, rng: &mut r },
        );
        assert_eq!(
            format!("{:?}", a.nodes),
            format!("{:?}", b.nodes),
            "case {case} (n {n}, p {p})"
        );
        split += (a.nodes.len() > 3) as usize;
        total += 1;
    }
    assert_eq!(
        split, total,
        "{split} of {total} trees split more than once"
    );
}

/// The presorted order (sorting keys) is `f64::total_cmp`'s, ties by row, on the
/// values where the two could part: signed zeros, infinities, NaNs of both signs,
/// subnormals and repeats.
#[test]
fn presorted_order_is_total_cmp_then_row() {
    let vals = [
        0.0,
        -0.0,
        1.5,
        -1.5,
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::NAN,
        -f64::NAN,
        f64::MIN_POSITIVE / 4.0,
        -f64::MIN_POSITIVE / 4.0,
        1.5,
        -0.0,
        f64::MAX,
        f64::MIN,
        2.0,
    ];
    let x = ndarray::Array2::from_shape_fn((vals.len(), 1), |(i, _)| vals[i]);
    let pre = Presorted::new(x.view());
    let mut want: Vec<u32> = (0..vals.len() as u32).collect();
    want.sort_by(|&a, &b| {
        vals[a as usize]
            .total_cmp(&vals[b as usize])
            .then(a.cmp(&b))
    });
    assert_eq!(pre.order, want);
}

/// Prediction in blocks of rows, a fixed number of steps each, finds the leaf the
/// node-by-node walk finds (`value_at`), bit for bit: unbalanced trees, rows that tie
/// a threshold exactly, NaNs (right), row counts that leave partial blocks, a one-leaf
/// tree, and `add_to`'s running sums.
#[test]
fn block_walk_equals_node_walk() {
    use rand::{Rng, SeedableRng};
    let mut g = rand_chacha::ChaCha8Rng::seed_from_u64(9);
    for case in 0..24 {
        let (n, p) = (30 + case * 3, 1 + case % 5);
        let x = ndarray::Array2::from_shape_fn((n, p), |_| g.gen_range(-2.0..2.0f64).round());
        let y = ndarray::Array1::from_shape_fn(n, |i| x[[i, 0]].powi(3) + g.gen_range(0.0..0.3));
        let w = vec![1.0; n];
        let params = TreeParams {
            depth: if case == 0 { 0 } else { 2 + case % 7 },
            min_leaf: 1 + case % 3,
        };
        let t = grow::<rand_chacha::ChaCha8Rng>(
            x.view(),
            y.view(),
            &w,
            (0..n).collect(),
            params,
            Candidates::All,
        );
        let m = 1 + case * 2;
        let probe = ndarray::Array2::from_shape_fn((m, p), |(i, f)| match (i + f) % 7 {
            0 => f64::NAN,
            1 => x[[i % n, f]],
            _ => g.gen_range(-3.0..3.0),
        });
        let want: Vec<f64> = probe.rows().into_iter().map(|r| t.predict_row(r)).collect();
        let got = t.predict(probe.view());
        let mut sums = vec![0.5; m];
        t.add_to(probe.view(), 0.25, &mut sums);
        for i in 0..m {
            assert_eq!(got[i].to_bits(), want[i].to_bits(), "case {case}, row {i}");
            assert_eq!(sums[i].to_bits(), (0.5 + 0.25 * want[i]).to_bits());
        }
    }
}

/// A lopsided tree (a balanced depth-2 tree with a chain of 24 splits under one leaf)
/// first checks for leaves at their mean depth and still finds every row's leaf; a
/// balanced one walks its whole depth at once.
#[test]
fn lopsided_tree_walks_in_bursts_to_the_same_leaves() {
    let leaf = |v: f64| Node {
        feature: usize::MAX,
        threshold: 0.0,
        left: 0,
        right: 0,
        value: v,
        gain: 0.0,
    };
    // Leaf `i` becomes a split on `f` at `thr`; returns its (left, right) leaves.
    let split = |nodes: &mut Vec<Node>, i: usize, f: usize, thr: f64| {
        let (l, r) = (nodes.len(), nodes.len() + 1);
        nodes.push(leaf(l as f64));
        nodes.push(leaf(r as f64));
        nodes[i] = Node {
            feature: f,
            threshold: thr,
            left: l as u32,
            right: r as u32,
            value: 0.0,
            gain: 1.0,
        };
        (l, r)
    };
    let mut nodes = vec![leaf(0.0)];
    let (l, r) = split(&mut nodes, 0, 0, 0.0);
    let (ll, lr) = split(&mut nodes, l, 1, 0.0);
    let (rl, mut tail) = split(&mut nodes, r, 1, 0.0);
    for k in 0..24 {
        tail = split(&mut nodes, tail, k % 2, 0.5 * k as f64).1;
    }
    let balanced = {
        let mut b = vec![leaf(0.0)];
        let (l, r) = split(&mut b, 0, 0, 0.0);
        split(&mut b, l, 1, 0.0);
        split(&mut b, r, 1, 0.0);
        Tree::new(b, &[])
    };
    assert_eq!((balanced.depth, balanced.first), (2, 2));
    // 30 training rows in each depth-2 leaf, one in each of the chain's 25 leaves:
    // mean depth (180 + 3 + ... + 26 + 26) / 115 = 4.8, first check after 5 steps.
    let mut reach = vec![1u32; nodes.len()];
    for i in [ll, lr, rl] {
        reach[i] = 30;
    }
    let t = Tree::new(nodes.clone(), &reach);
    assert_eq!((t.depth, t.first), (26, 5));
    // Counted by leaves alone it is not lopsided (mean depth 13.6 against 26).
    assert_eq!(Tree::new(nodes, &[]).first, 26);
    let probe = ndarray::Array2::from_shape_fn((37, 2), |(i, f)| {
        (i as f64 - 5.0) * if f == 0 { 0.4 } else { 0.45 }
    });
    let got = t.predict(probe.view());
    let mut deep = 0;
    for (i, r) in probe.rows().into_iter().enumerate() {
        let want = t.predict_row(r);
        assert_eq!(got[i].to_bits(), want.to_bits(), "row {i}");
        deep += usize::from(want > 10.0);
    }
    assert!(deep > 5, "{deep} rows reach deep into the chain");
}

#[test]
fn min_leaf_is_respected() {
    let x = array![[1.0], [2.0], [3.0], [4.0]];
    let y = array![0.0, 10.0, 10.0, 10.0];
    let w = vec![1.0; 4];
    let t = grow::<rand_chacha::ChaCha8Rng>(
        x.view(),
        y.view(),
        &w,
        (0..4).collect(),
        TreeParams {
            depth: 3,
            min_leaf: 2,
        },
        Candidates::All,
    );
    assert_eq!(t.splits(), vec![(0, 2.5)]);
}
