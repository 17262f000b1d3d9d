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

/// The forest's floor (our definition, stated in the README): for each node whose split
/// the forest searched, one pass over that node's rows (`scans`: rows, indicators) per
/// indicator scanned there, accumulating each row's weight and weighted outcome, the least
/// a split search must do. The passes read the first `rows` entries of a sorted order.
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

/// The forest of the floor comparison: 100 trees (tried 0.33, min_leaf 5) on fold 0 of the
/// toy panel, median-filled, unit weights; and the row order the floor kernel walks.
pub struct FloorCase {
    pub x: ndarray::Array2<f64>,
    pub y: ndarray::Array1<f64>,
    pub w: ndarray::Array1<f64>,
    pub params: forkmap::models::forest::ForestParams,
    pub order: Vec<usize>,
}

impl FloorCase {
    pub fn new() -> FloorCase {
        let p = prepared();
        let (_, y, x) = fold0(&p);
        let n = x.nrows();
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| x[[a, 0]].total_cmp(&x[[b, 0]]));
        FloorCase {
            w: ndarray::Array1::ones(n),
            params: forkmap::models::forest::ForestParams {
                trees: 100,
                tried: 0.33,
                min_leaf: 5,
            },
            x,
            y,
            order,
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
        f.trees.iter().flat_map(|t| t.scans().to_vec()).collect()
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
