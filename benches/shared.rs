//! Helpers shared by the Criterion benches (`sweep.rs`) and the instruction-count
//! program (`floor_count.rs`).

use std::path::Path;

pub fn prepared() -> forkmap::run::Prepared {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    forkmap::run::prepare(&root.join("configs/toy-quick.toml")).expect("toy-quick prepares")
}

/// Fold 0's training rows: raw indicators, outcome, and the same rows median-filled.
pub type Fold0 = (
    ndarray::Array2<f64>,
    ndarray::Array1<f64>,
    ndarray::Array2<f64>,
);

pub fn fold0(p: &forkmap::run::Prepared) -> Fold0 {
    use forkmap::stages::{build, StageInput};
    let fold = &p.folds.folds[0];
    let raw = p.panel.x.select(ndarray::Axis(0), &fold.train);
    let y = p.panel.y.select(ndarray::Axis(0), &fold.train);
    let median = p.space.options[1]
        .iter()
        .find(|c| c.option == "median")
        .expect("the demo config lists the median fill");
    let filled = build(median, &p.panel)
        .expect("median")
        .fit(&StageInput {
            x: raw.view(),
            y: y.view(),
            rows: &fold.train,
            names: &p.panel.indicators,
        })
        .expect("median fill fits")
        .apply_rows(raw.view(), Some(&fold.train));
    (raw, y, filled)
}

/// The forest's fused floor: `passes` passes over all the rows in a sorted order,
/// accumulating each row's weight and weighted outcome. It makes as many row visits as the
/// forest's split search, but in long passes, with none of the start and end of a pass
/// over a node's few rows: a bound below what any per-node search reaches.
#[inline(never)]
pub fn floor_kernel(passes: u64, order: &[usize], w: &[f64], y: &[f64]) -> (f64, f64) {
    let (mut lw, mut lwy) = (0.0f64, 0.0f64);
    for _ in 0..passes {
        for &i in std::hint::black_box(order) {
            lw += w[i];
            lwy += w[i] * y[i];
        }
    }
    std::hint::black_box((lw, lwy))
}

/// The forest's floor (our definition, in benches/MEASUREMENTS.md): for each node whose split
/// the forest searched, one pass over that node's rows (`scans`: rows, indicators) per
/// indicator scanned there, accumulating each row's weight and weighted outcome (less than
/// an exact split search can do, which also scores candidates: see the search floor). The
/// passes read the first `rows` entries of a sorted order.
#[inline(never)]
pub fn floor_kernel_per_node(
    scans: &[[u32; 2]],
    order: &[usize],
    w: &[f64],
    y: &[f64],
) -> (f64, f64) {
    let (mut lw, mut lwy) = (0.0f64, 0.0f64);
    let order = std::hint::black_box(order);
    for &[n, t] in std::hint::black_box(scans) {
        for _ in 0..t {
            for &i in &order[..n as usize] {
                lw += w[i];
                lwy += w[i] * y[i];
            }
        }
    }
    std::hint::black_box((lw, lwy))
}

/// The forest's search floor (our definition, in benches/MEASUREMENTS.md): the accumulation floor
/// above plus what an exact split search cannot skip, scoring every candidate threshold.
/// For each node the forest searched, one pass over the node's rows per indicator scanned
/// there, each pass in another indicator's sorted order (the first n rows of it, as the
/// floor above takes), accumulating the left side's weight and weighted outcome; at each
/// candidate (at least `min_leaf` rows on each side, between distinct values) the split's
/// score lwy^2/lw + rwy^2/rw is compared with the node's best so far, first without
/// dividing and exactly only when it may win (the cheapest exact comparison we know). The
/// node's totals come from `tot` (per indicator, sums over the first n rows of its order),
/// as a grower gets them from the parent's split. Returns the sum of the nodes' best
/// scores.
#[inline(never)]
pub fn search_floor_per_node(scans: &[[u32; 2]], s: &SearchCase, min_leaf: usize) -> f64 {
    let SearchCase {
        n: nall,
        p,
        order,
        xs,
        wy,
        tot,
    } = std::hint::black_box(s);
    let mut total = 0.0;
    let mut f = 0usize;
    for &[n, t] in std::hint::black_box(scans) {
        let n = n as usize;
        let mut best = f64::NEG_INFINITY;
        for _ in 0..t {
            let (ord, x) = (&order[f * nall..], &xs[f * nall..]);
            let [sw, swy] = tot[f * (nall + 1) + n];
            f = if f + 1 == *p { 0 } else { f + 1 };
            let (mut lw, mut lwy) = (0.0f64, 0.0f64);
            for &i in &ord[..min_leaf - 1] {
                let [a, b] = wy[i as usize];
                lw += a;
                lwy += b;
            }
            for k in min_leaf - 1..n - min_leaf {
                let [a, b] = wy[ord[k] as usize];
                lw += a;
                lwy += b;
                if x[k + 1] <= x[k] + 1e-7 {
                    continue;
                }
                let (rw, rwy) = (sw - lw, swy - lwy);
                if lwy * lwy * rw + rwy * rwy * lw <= best * (lw * rw) {
                    continue;
                }
                best = lwy * lwy / lw + rwy * rwy / rw;
            }
        }
        total += best;
    }
    std::hint::black_box(total)
}

/// What the search floor walks: every indicator's rows in ascending order (`order`, ties
/// by row) and its values in that order (`xs`), `[w, w y]` per row, and per indicator the
/// sums over the first 0..=n rows of its order.
pub struct SearchCase {
    pub n: usize,
    pub p: usize,
    pub order: Vec<u32>,
    pub xs: Vec<f64>,
    pub wy: Vec<[f64; 2]>,
    pub tot: Vec<[f64; 2]>,
}

impl SearchCase {
    pub fn new(x: ndarray::ArrayView2<f64>, y: ndarray::ArrayView1<f64>, w: &[f64]) -> SearchCase {
        let (n, p) = x.dim();
        let wy: Vec<[f64; 2]> = (0..n).map(|i| [w[i], w[i] * y[i]]).collect();
        let (mut order, mut xs, mut tot) = (Vec::new(), Vec::new(), Vec::new());
        for f in 0..p {
            let mut o: Vec<u32> = (0..n as u32).collect();
            o.sort_by(|&a, &b| {
                x[[a as usize, f]]
                    .total_cmp(&x[[b as usize, f]])
                    .then(a.cmp(&b))
            });
            let (mut a, mut b) = (0.0, 0.0);
            tot.push([a, b]);
            for &i in &o {
                xs.push(x[[i as usize, f]]);
                a += wy[i as usize][0];
                b += wy[i as usize][1];
                tot.push([a, b]);
            }
            order.extend(o);
        }
        SearchCase {
            n,
            p,
            order,
            xs,
            wy,
            tot,
        }
    }
}

/// The forest of the floor comparison: 100 trees (tried 0.33, min_leaf 5) on fold 0 of the
/// toy panel, median-filled, unit weights; and the row order the floor kernel walks.
/// The synthetic panel of `floor_count wide`: `n` rows x `p` indicators, uniform values on
/// a 0.001 grid (so some tie), the outcome from two indicators plus noise.
#[allow(dead_code)] // the Criterion benches use the toy panel only
pub fn synthetic(n: usize, p: usize) -> (ndarray::Array2<f64>, ndarray::Array1<f64>) {
    use rand::{Rng, SeedableRng};
    let mut g = rand_chacha::ChaCha8Rng::seed_from_u64(1);
    let x = ndarray::Array2::from_shape_fn((n, p), |_| {
        (g.gen_range(0.0..100.0f64) * 1000.0).round() / 1000.0
    });
    let y = ndarray::Array1::from_shape_fn(n, |i| {
        0.3 * x[[i, 0]] + x[[i, 1 % p]].sin() + g.gen_range(0.0..5.0)
    });
    (x, y)
}

pub struct FloorCase {
    pub x: ndarray::Array2<f64>,
    pub y: ndarray::Array1<f64>,
    pub w: ndarray::Array1<f64>,
    pub params: forkmap::models::forest::ForestParams,
    pub order: Vec<usize>,
    /// What the search floor walks.
    pub search: SearchCase,
}

impl FloorCase {
    /// Fold 0 of the toy panel with the comparison's forest, or, when `FLOOR_SHAPE` is
    /// `"ROWS INDICATORS TRIED MIN_LEAF"`, the synthetic panel of `floor_count wide` with
    /// that forest (the floors at users' shapes).
    pub fn new() -> FloorCase {
        let mut params = FloorCase::params();
        let (y, x) = match std::env::var("FLOOR_SHAPE") {
            Ok(shape) => {
                let v: Vec<&str> = shape.split_whitespace().collect();
                let bad = || -> ! {
                    eprintln!(
                        "FLOOR_SHAPE: expected \"ROWS INDICATORS TRIED MIN_LEAF\", got `{shape}`"
                    );
                    std::process::exit(2)
                };
                let [n, p, t, m] = v[..] else { bad() };
                let (Ok(n), Ok(p), Ok(t), Ok(m)) = (n.parse(), p.parse(), t.parse(), m.parse())
                else {
                    bad()
                };
                params.tried = t;
                params.min_leaf = m;
                let (x, y) = synthetic(n, p);
                (y, x)
            }
            Err(_) => {
                let (_, y, x) = fold0(&prepared());
                (y, x)
            }
        };
        let n = x.nrows();
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| x[[a, 0]].total_cmp(&x[[b, 0]]));
        let w = ndarray::Array1::ones(n);
        let search = SearchCase::new(x.view(), y.view(), &w.to_vec());
        FloorCase {
            search,
            w,
            params,
            x,
            y,
            order,
        }
    }

    /// The forest of the comparison: 100 trees, tried 0.33, min_leaf 5.
    pub fn params() -> forkmap::models::forest::ForestParams {
        forkmap::models::forest::ForestParams {
            trees: 100,
            tried: 0.33,
            min_leaf: 5,
        }
    }

    pub fn input(&self) -> forkmap::models::FitInput<'_> {
        forkmap::models::FitInput {
            x: self.x.view(),
            y: self.y.view(),
            w: self.w.view(),
            seed: 7,
        }
    }

    /// The forest's split searches: (rows, indicators scanned) per node searched, over
    /// all its trees.
    pub fn scans(&self) -> Vec<[u32; 2]> {
        let f = self
            .params
            .grow_forest(&self.input())
            .expect("the forest fits");
        f.trees().iter().flat_map(|t| t.scans().to_vec()).collect()
    }

    /// Passes over the rows the fused floor makes: the forest's split-search row visits
    /// / n.
    pub fn passes(&self) -> u64 {
        let visits: u64 = self
            .scans()
            .iter()
            .map(|&[n, t]| u64::from(n) * u64::from(t))
            .sum();
        visits / self.x.nrows() as u64
    }
}
