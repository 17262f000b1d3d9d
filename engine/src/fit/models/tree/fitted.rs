//! The fitted tree: its nodes, their layout for prediction, and the walks that find a
//! row's leaf (node by node for one row, in blocks of rows for many).

use crate::models::Predictor;
use ndarray::{Array1, ArrayView1, ArrayView2};

/// One node of a fitted tree.
#[derive(Debug, Clone, Copy)]
pub(super) struct Node {
    /// `usize::MAX` marks a leaf.
    pub(super) feature: usize,
    pub(super) threshold: f64,
    pub(super) left: u32,
    pub(super) right: u32,
    pub(super) value: f64,
    /// Weighted squared-error reduction of the split (0 at leaves).
    pub(super) gain: f64,
}

impl Node {
    /// A leaf predicting `value`.
    pub(super) fn leaf(value: f64) -> Node {
        Node {
            feature: usize::MAX,
            threshold: 0.0,
            left: 0,
            right: 0,
            value,
            gain: 0.0,
        }
    }
}

/// A fitted tree.
#[derive(Debug, Clone)]
pub struct Tree {
    pub(super) nodes: Vec<Node>,
    /// Benchmarks only: per node whose split was searched, its row count and the
    /// indicators scanned there. A split search visits each of those rows once per
    /// indicator, which is the work it cannot avoid; the floor benchmark replays it.
    #[cfg(feature = "bench-scans")]
    pub(super) scans: Vec<[u32; 2]>,
    /// The nodes laid out for prediction ([`Step`]), the depth of the deepest leaf, and
    /// how many steps a walk takes before it first checks that its rows all stand on
    /// leaves: the whole depth, or in a lopsided tree the training rows' mean leaf depth
    /// (rounded up), then every [`WALK_BURST`] steps.
    steps: Vec<Step>,
    pub(super) depth: usize,
    pub(super) first: usize,
}

/// One node as prediction walks it: x[feature] <= threshold goes to `next[1]`, else to
/// `next[0]`. A leaf leads to itself both ways, so a walk of the tree's depth ends at the
/// row's leaf whatever its own depth: every row of a tree takes the same number of steps,
/// with no branch on where it stands.
#[derive(Debug, Clone, Copy)]
struct Step {
    threshold: f64,
    feature: u32,
    next: [u32; 2],
    leaf: bool,
}

/// Rows walked through a tree side by side (independent chains of loads, so the processor
/// overlaps them).
const WALK_BLOCK: usize = 8;

/// Steps a walk takes between checks that a block's rows all stand on leaves, after the
/// first check.
const WALK_BURST: usize = 4;

impl Tree {
    /// `rows[i]`: the training rows that reached node i (weights aside).
    pub(super) fn new(nodes: Vec<Node>, rows: &[u32]) -> Tree {
        let mut steps = Vec::with_capacity(nodes.len());
        for (i, n) in nodes.iter().enumerate() {
            steps.push(if n.feature == usize::MAX {
                Step {
                    threshold: 0.0,
                    feature: 0,
                    next: [i as u32; 2],
                    leaf: true,
                }
            } else {
                Step {
                    threshold: n.threshold,
                    feature: n.feature as u32,
                    next: [n.right, n.left],
                    leaf: false,
                }
            });
        }
        // Depth of the deepest leaf, and the mean depth of the training rows' leaves
        // (children always come after their parent).
        let mut at = vec![0usize; nodes.len()];
        let (mut depth, mut sum, mut count) = (0, 0, 0);
        for (i, n) in nodes.iter().enumerate() {
            if n.feature == usize::MAX {
                let c = rows.get(i).map_or(1, |&c| c as usize);
                depth = depth.max(at[i]);
                sum += c * at[i];
                count += c;
            } else {
                at[n.left as usize] = at[i] + 1;
                at[n.right as usize] = at[i] + 1;
            }
        }
        // Lopsided (the deepest leaf far below where most rows end): walk the rows' mean
        // depth, then check for leaves every few steps. Otherwise the whole depth at once.
        let mean = sum.div_ceil(count.max(1));
        let first = if depth > 2 * mean + 2 {
            mean.max(1)
        } else {
            depth
        };
        Tree {
            nodes,
            #[cfg(feature = "bench-scans")]
            scans: Vec::new(),
            steps,
            depth,
            first,
        }
    }

    /// The leaf of each row of `flat` (row-major, `p` > 0 columns), handed to `visit(row,
    /// leaf value)` in row order. Rows go through the tree in blocks of [`WALK_BLOCK`], each
    /// row taking the tree's depth in steps (fewer in a lopsided tree once the whole block
    /// stands on leaves); a NaN goes right, as `x <= threshold` fails for it.
    fn leaves(&self, flat: &[f64], p: usize, mut visit: impl FnMut(usize, f64)) {
        for (b, block) in flat.chunks(WALK_BLOCK * p).enumerate() {
            let m = block.len() / p;
            let mut at = [0u32; WALK_BLOCK];
            if self.first >= self.depth {
                self.steps_on(&mut at[..m], block, p, self.depth);
            } else {
                // `first` steps, then bursts of `WALK_BURST`, stopping once every row of
                // the block stands on a leaf (in a lopsided tree the deepest leaf can lie
                // far below most rows' paths).
                let mut left = self.depth;
                let mut burst = self.first;
                while left > 0 {
                    burst = burst.min(left);
                    self.steps_on(&mut at[..m], block, p, burst);
                    left -= burst;
                    if at[..m].iter().all(|&a| self.steps[a as usize].leaf) {
                        break;
                    }
                    burst = WALK_BURST;
                }
            }
            for (k, &a) in at[..m].iter().enumerate() {
                visit(b * WALK_BLOCK + k, self.nodes[a as usize].value);
            }
        }
    }

    /// `count` steps of each row of `block` (row-major, `p` columns) from the node in `at`.
    #[inline(always)]
    fn steps_on(&self, at: &mut [u32], block: &[f64], p: usize, count: usize) {
        let steps = &self.steps[..];
        for _ in 0..count {
            for (k, a) in at.iter_mut().enumerate() {
                let s = &steps[*a as usize];
                let go = block[k * p + s.feature as usize] <= s.threshold;
                *a = s.next[usize::from(go)];
            }
        }
    }
}

impl Tree {
    pub fn predict_row(&self, row: ArrayView1<f64>) -> f64 {
        match row.as_slice() {
            Some(r) => self.value_at(r),
            None => self.value_at(&row.to_vec()),
        }
    }

    /// The leaf value for one row (a contiguous slice of indicator values). The child is
    /// picked without a branch (a row's side is a coin flip to the branch predictor); a
    /// NaN goes right, as `x <= threshold` fails for it.
    pub fn value_at(&self, row: &[f64]) -> f64 {
        let mut i = 0usize;
        loop {
            let n = &self.nodes[i];
            if n.feature == usize::MAX {
                return n.value;
            }
            let left = row[n.feature] <= n.threshold;
            i = [n.right, n.left][usize::from(left)] as usize;
        }
    }

    /// Add `scale` x this tree's value for each row of `x` to `out` (`out[i] += scale *
    /// value`, in row order), reading `x` row-major.
    pub fn add_to(&self, x: ArrayView2<f64>, scale: f64, out: &mut [f64]) {
        let xs = x.as_standard_layout();
        match xs.as_slice() {
            Some(flat) if x.ncols() > 0 => {
                self.leaves(flat, x.ncols(), |i, v| out[i] += scale * v);
            }
            _ => {
                for (o, row) in out.iter_mut().zip(x.rows()) {
                    *o += scale * self.predict_row(row);
                }
            }
        }
    }
    /// (feature, threshold) of every split, depth-first, for inspection and tests.
    pub fn splits(&self) -> Vec<(usize, f64)> {
        self.nodes
            .iter()
            .filter(|n| n.feature != usize::MAX)
            .map(|n| (n.feature, n.threshold))
            .collect()
    }
    /// Impurity decrease per feature (`p` features), summed over splits.
    pub fn impurity(&self, p: usize) -> Vec<f64> {
        let mut v = vec![0.0; p];
        for n in &self.nodes {
            if n.feature != usize::MAX && n.feature < p {
                v[n.feature] += n.gain;
            }
        }
        v
    }

    /// Benchmarks only: row visits of the split search (see `scans`).
    #[cfg(feature = "bench-scans")]
    pub fn scanned(&self) -> u64 {
        self.scans
            .iter()
            .map(|&[n, t]| u64::from(n) * u64::from(t))
            .sum()
    }

    /// Benchmarks only: (rows, indicators scanned) of each node whose split was searched,
    /// in the order searched.
    #[cfg(feature = "bench-scans")]
    pub fn scans(&self) -> &[[u32; 2]] {
        &self.scans
    }

    pub fn n_leaves(&self) -> usize {
        self.nodes
            .iter()
            .filter(|n| n.feature == usize::MAX)
            .count()
    }
}

impl Predictor for Tree {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        let xs = x.as_standard_layout();
        match xs.as_slice() {
            Some(flat) if x.ncols() > 0 => {
                let mut out = vec![0.0; x.nrows()];
                self.leaves(flat, x.ncols(), |i, v| out[i] = v);
                Array1::from(out)
            }
            _ => x.rows().into_iter().map(|r| self.predict_row(r)).collect(),
        }
    }
    fn native(&self, x_train: ArrayView2<f64>) -> Option<(&'static str, Vec<f64>)> {
        Some((
            "impurity",
            crate::models::normalise(self.impurity(x_train.ncols())),
        ))
    }
}
