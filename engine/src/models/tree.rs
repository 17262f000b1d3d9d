//! Weighted CART regression tree (squared error), written here because no maintained Rust
//! crate fits regression trees with row weights (smartcore's and linfa's trees take none).
//!
//! At each node every candidate indicator is sorted over the node's rows; a split falls
//! midway between consecutive distinct values (as in scikit-learn) and must leave at least
//! `min_leaf` rows on each side. The split maximising the weighted reduction in squared
//! error wins; ties keep the first indicator in column order. A leaf predicts the
//! weighted mean outcome of its rows.

use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::error::FitError;
use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use ndarray::{Array1, ArrayView1, ArrayView2};
use rand::Rng;
use std::sync::Arc;

/// Consecutive values closer than this are not split between (scikit-learn's
/// FEATURE_THRESHOLD rule), so splits never hinge on rounding noise.
pub const FEATURE_THRESHOLD: f64 = 1e-7;

pub const DEPTH: ParamDecl = ParamDecl {
    name: "depth",
    kind: ParamKind::Int { min: 1, max: 64 },
    default: 4.0,
    help: "maximum depth (root = 0)",
};
pub const MIN_LEAF: ParamDecl = ParamDecl {
    name: "min_leaf",
    kind: ParamKind::Int {
        min: 1,
        max: 100_000,
    },
    default: 5.0,
    help: "fewest training rows in a leaf",
};

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "tree",
        params: &[DEPTH, MIN_LEAF],
        help: "regression tree (CART, squared error)",
        weighted: true,
    },
    cost: |c, n, p| p * n * c.param("depth").unwrap_or(8.0).min(n.log2().max(1.0)),
    build: |c: &Choice| {
        Ok(Arc::new(TreeParams {
            depth: int_param(c, "depth")?,
            min_leaf: int_param(c, "min_leaf")?,
        }))
    },
};

/// Checked tree hyperparameters.
#[derive(Debug, Clone, Copy)]
pub struct TreeParams {
    pub depth: usize,
    pub min_leaf: usize,
}

#[derive(Debug, Clone, Copy)]
struct Node {
    /// `usize::MAX` marks a leaf.
    feature: usize,
    threshold: f64,
    left: u32,
    right: u32,
    value: f64,
    /// Weighted squared-error reduction of the split (0 at leaves).
    gain: f64,
}

/// A fitted tree.
#[derive(Debug, Clone)]
pub struct Tree {
    nodes: Vec<Node>,
    /// Per node whose split was searched: its row count and the indicators scanned there.
    /// A split search visits each of those rows once per indicator, which is the work it
    /// cannot avoid; the floor benchmark replays it.
    scans: Vec<[u32; 2]>,
    /// The nodes laid out for prediction ([`Step`]), the depth of the deepest leaf, and
    /// how many steps a walk takes before it first checks that its rows all stand on
    /// leaves: the whole depth, or in a lopsided tree the training rows' mean leaf depth
    /// (rounded up), then every [`WALK_BURST`] steps.
    steps: Vec<Step>,
    depth: usize,
    first: usize,
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
    fn new(nodes: Vec<Node>, scans: Vec<[u32; 2]>, rows: &[u32]) -> Tree {
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
            scans,
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

    /// Row visits of the split search (see `scans`).
    pub fn scanned(&self) -> u64 {
        self.scans
            .iter()
            .map(|&[n, t]| u64::from(n) * u64::from(t))
            .sum()
    }

    /// (rows, indicators scanned) of each node whose split was searched, in the order
    /// searched.
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
        Some(("impurity", super::normalise(self.impurity(x_train.ncols()))))
    }
}

/// How a grower picks candidate indicators at a split.
pub enum Candidates<'r, R: Rng> {
    All,
    /// `m` indicators drawn afresh at each split.
    Sample {
        m: usize,
        rng: &'r mut R,
    },
    /// Extremely randomised splits (Geurts, Ernst & Wehenkel 2006): `m` indicators drawn
    /// at each split, each with one threshold drawn uniformly between its node minimum and
    /// maximum; the best of those splits wins.
    Extra {
        m: usize,
        rng: &'r mut R,
    },
}

/// A fit's training rows prepared once for growing many trees (a forest's trees, a
/// boosting's rounds): the indicators in column-major order, and each indicator's row
/// order sorted once by value (ties by row index). Growing then walks these orders instead
/// of sorting at every node: a node costs one pass over its rows per indicator (Breiman et
/// al. 1984, ch. 5; the presorting of SPRINT/SLIQ-style growers).
pub struct Presorted {
    n: usize,
    p: usize,
    /// `xt[f * n + i]` = x[i, f].
    xt: Vec<f64>,
    /// `order[f * n..(f + 1) * n]`: rows by ascending x[., f], ties by row.
    order: Vec<u32>,
    /// Whether some value is NaN (the bitset grower's tie test assumes none).
    nan: bool,
    /// The orders in bytes ([`Ranks`]), made at first use and only for at most 128 rows
    /// (only the bitset grower reads them).
    ranks: std::sync::OnceLock<Ranks>,
}

/// Every indicator's order in bytes, for at most 128 rows: small enough (three bytes per
/// row and indicator) to stay in the first-level cache while a tree is grown, where the
/// row lists and values (twelve bytes per row and indicator) do not.
struct Ranks {
    /// `rank[f * n + i]`: row i's position in indicator f's order (its ordinal rank).
    rank: Vec<u8>,
    /// `row[f * n + r]`: the row of rank r (`Presorted::order` in a byte).
    row: Vec<u8>,
    /// `next[f * n + r]`: the first rank s > r whose value is not within
    /// [`FEATURE_THRESHOLD`] of rank r's (`!(x_s <= x_r + FEATURE_THRESHOLD)`), n if none.
    /// The values rise with the rank, so for ranks r < s the values tie exactly when
    /// s < next[r]: the split scan's tie test without reading a value (no value is NaN).
    next: Vec<u8>,
}

/// The bit of each rank r < 128 as two words: `[1 << r, 0]` below 64, `[0, 1 << (r - 64)]`
/// from 64.
const RANK_BIT: [[u64; 2]; 128] = {
    let mut t = [[0u64; 2]; 128];
    let mut r = 0;
    while r < 128 {
        t[r][r >> 6] = 1u64 << (r & 63);
        r += 1;
    }
    t
};

impl Presorted {
    pub fn new(x: ArrayView2<f64>) -> Presorted {
        let (n, p) = x.dim();
        let mut xt = vec![0.0; n * p];
        for (i, row) in x.rows().into_iter().enumerate() {
            for (f, v) in row.iter().enumerate() {
                xt[f * n + i] = *v;
            }
        }
        let mut order = Vec::with_capacity(n * p);
        let mut keys: Vec<u128> = Vec::with_capacity(n);
        for f in 0..p {
            // Each row's key: its value's bits mapped so that unsigned order is
            // `f64::total_cmp`'s, then the row, so no two keys are equal and sorting the
            // keys gives rows by value, ties by row.
            keys.clear();
            keys.extend(xt[f * n..(f + 1) * n].iter().enumerate().map(|(i, v)| {
                let b = v.to_bits();
                let ordered = if b >> 63 == 1 { !b } else { b | (1 << 63) };
                (u128::from(ordered) << 32) | i as u128
            }));
            keys.sort_unstable();
            order.extend(keys.iter().map(|&k| k as u32));
        }
        let nan = xt.iter().any(|v| v.is_nan());
        Presorted {
            n,
            p,
            xt,
            order,
            nan,
            ranks: std::sync::OnceLock::new(),
        }
    }

    /// The orders in bytes (see [`Ranks`]); at most 128 rows.
    fn ranks(&self) -> &Ranks {
        debug_assert!(self.n <= 128);
        self.ranks.get_or_init(|| {
            let (n, p) = (self.n, self.p);
            let (mut rank, mut row, mut next) =
                (vec![0u8; n * p], vec![0u8; n * p], vec![0u8; n * p]);
            for f in 0..p {
                let order = &self.order[f * n..(f + 1) * n];
                let col = self.col(f);
                for (r, &i) in order.iter().enumerate() {
                    rank[f * n + i as usize] = r as u8;
                    row[f * n + r] = i as u8;
                }
                // The values rise with the rank, so next[r] never falls as r rises: one
                // cursor moved forwards serves every r.
                let mut s = 1;
                for r in 0..n {
                    let x = col[order[r] as usize];
                    s = s.max(r + 1);
                    while s < n && col[order[s] as usize] <= x + FEATURE_THRESHOLD {
                        s += 1;
                    }
                    next[f * n + r] = s as u8;
                }
            }
            Ranks { rank, row, next }
        })
    }

    fn col(&self, f: usize) -> &[f64] {
        &self.xt[f * self.n..(f + 1) * self.n]
    }
}

/// Draws the indicators tried at a split: `m` of the `p` that vary at the node, without
/// replacement, listed in ascending order (ties between equal gains go to the lowest
/// indicator). A partial Fisher-Yates shuffle (Durstenfeld 1964) of a permutation reset
/// at each tree: from any starting permutation its leading entries are a uniform draw,
/// and skipping the constant ones leaves a uniform draw among the others. A branch-free
/// pass over a mask lists them in order, so nothing is sorted or allocated per split.
pub(crate) struct FeatureDraw {
    perm: Vec<usize>,
    mask: Vec<bool>,
    vary: Vec<bool>,
}

impl FeatureDraw {
    pub(crate) fn new(p: usize) -> FeatureDraw {
        FeatureDraw {
            perm: (0..p).collect(),
            mask: vec![false; p],
            vary: vec![false; p],
        }
    }

    /// Back to the identity permutation (at the start of each tree).
    pub(crate) fn reset(&mut self) {
        for (k, v) in self.perm.iter_mut().enumerate() {
            *v = k;
        }
    }

    /// Draw `m` indicators for which `varies` holds: drawing goes on until `m` of them
    /// are found or every indicator was drawn, and only those are listed (as
    /// scikit-learn's splitters do, so `m` indicators that can split are tried whenever
    /// there are that many).
    pub(crate) fn draw<R: Rng>(
        &mut self,
        rng: &mut R,
        m: usize,
        mut varies: impl FnMut(usize) -> bool,
        out: &mut Vec<usize>,
    ) {
        let p = self.perm.len();
        let m = m.min(p);
        let (mut i, mut found) = (0usize, 0usize);
        while found < m && i < p {
            let j = rng.gen_range(i..p);
            self.perm.swap(i, j);
            let f = self.perm[i];
            if varies(f) {
                self.mask[f] = true;
                found += 1;
            }
            i += 1;
        }
        self.list(out);
    }

    /// The same draw as [`draw`](Self::draw), with whether each of the first `m` drawn
    /// indicators varies asked of all of them at once (`varies_all(fs, vary)` sets
    /// `vary[k]` for `fs[k]`), then one at a time. The random stream is the same: at
    /// least `m` indicators are drawn whatever varies, and each draw takes the same
    /// number from it.
    pub(crate) fn draw_batched<R: Rng>(
        &mut self,
        rng: &mut R,
        m: usize,
        mut varies_all: impl FnMut(&[usize], &mut [bool]),
        out: &mut Vec<usize>,
    ) {
        let p = self.perm.len();
        let m = m.min(p);
        for i in 0..m {
            let j = rng.gen_range(i..p);
            self.perm.swap(i, j);
        }
        varies_all(&self.perm[..m], &mut self.vary[..m]);
        let mut found = 0usize;
        for (&f, &v) in self.perm[..m].iter().zip(&self.vary[..m]) {
            self.mask[f] = v;
            found += v as usize;
        }
        let mut i = m;
        while found < m && i < p {
            let j = rng.gen_range(i..p);
            self.perm.swap(i, j);
            let f = self.perm[i];
            varies_all(&self.perm[i..=i], &mut self.vary[..1]);
            if self.vary[0] {
                self.mask[f] = true;
                found += 1;
            }
            i += 1;
        }
        self.list(out);
    }

    /// The drawn indicators in ascending order, clearing the mask.
    fn list(&mut self, out: &mut Vec<usize>) {
        let p = self.perm.len();
        out.clear();
        out.resize(p + 1, 0);
        let mut c = 0usize;
        for f in 0..p {
            out[c] = f;
            c += self.mask[f] as usize;
            self.mask[f] = false;
        }
        out.truncate(c);
    }
}

/// Stable in-place split of one list segment (a node's rows in one indicator's order)
/// into its children's segments, left rows first. `go_left` is indexed by row. Only the
/// segments of children that will be split further are written: `keep = (left, right)`.
/// Branch-free: every row is written to the cursor of each written side and only the
/// cursor of its own side moves. Left rows are compacted forwards in place (the write
/// cursor never passes the read cursor); right rows go through `tmp` when both sides are
/// kept, and are compacted backwards in place when only the right one is.
#[inline(never)]
fn split_segment(
    seg: &mut [u32],
    go_left: &[bool],
    ln: usize,
    keep: (bool, bool),
    tmp: &mut [u32],
) {
    let n = seg.len();
    match keep {
        (true, true) => {
            let (mut a, mut b) = (0usize, 0usize);
            for k in 0..n {
                let i = seg[k];
                let go = go_left[i as usize] as usize;
                seg[a] = i;
                tmp[b] = i;
                a += go;
                b += 1 - go;
            }
            seg[ln..].copy_from_slice(&tmp[..n - ln]);
        }
        (true, false) => {
            let mut a = 0usize;
            for k in 0..n {
                let i = seg[k];
                seg[a] = i;
                a += go_left[i as usize] as usize;
            }
        }
        (false, true) => {
            // Backwards; the cursor stays at or above ln - 1 >= 0 and at or above the
            // read position.
            let mut b = n - 1;
            for k in (0..n).rev() {
                let i = seg[k];
                seg[b] = i;
                b -= 1 - go_left[i as usize] as usize;
            }
        }
        (false, false) => {}
    }
}

/// A node's rows in one indicator's order, made without sorting or rearranging: each
/// row's ordinal rank for the indicator (its position in the presorted order) sets one bit
/// of a bitset over ranks, and the set bits read in ascending order give the rows through
/// the presorted order ([`BitCursor`]). That is the presorted order filtered to the
/// node's rows, which is what rearranging the order at every split keeps, at one pass over
/// the node's rows for each indicator drawn there instead of one per indicator at every
/// split. For at most 128 training rows (the bitset stays in two registers): bit r is set
/// when the row of rank r is one of `rows`. Each row's rank comes from a byte table and
/// its bit from [`RANK_BIT`], both small enough to stay in the first-level cache.
#[inline]
fn rank_bits(rows: &[u32], rank: &[u8]) -> u128 {
    let (mut lo, mut hi) = (0u64, 0u64);
    for &i in rows {
        let [a, b] = RANK_BIT[usize::from(rank[i as usize]) & 127];
        lo |= a;
        hi |= b;
    }
    u128::from(lo) | (u128::from(hi) << 64)
}

/// [`rank_bits`] of four indicators in one pass over the rows.
#[inline]
fn rank_bits4(rows: &[u32], rank: [&[u8]; 4]) -> [u128; 4] {
    let mut w = [[0u64; 2]; 4];
    for &i in rows {
        for (wj, tab) in w.iter_mut().zip(&rank) {
            let [a, b] = RANK_BIT[usize::from(tab[i as usize]) & 127];
            wj[0] |= a;
            wj[1] |= b;
        }
    }
    w.map(|[lo, hi]| u128::from(lo) | (u128::from(hi) << 64))
}

/// A node's rows in one indicator's order, handed out one at a time to the split scan:
/// from the arena's kept order or from a bitset over ranks ([`rank_bits`]). Each row
/// comes with a key that tells ties apart: its value, or its rank. The caller takes at
/// most as many rows as the node has.
trait RowCursor {
    type Key: Copy;
    fn next_row(&mut self) -> (u32, Self::Key);
    /// The next row without its key (for rows whose value is never compared).
    fn next_row_only(&mut self) -> u32 {
        self.next_row().0
    }
    /// Whether the row after (key `hi`) ties with the row before (key `lo`):
    /// x_hi <= x_lo + FEATURE_THRESHOLD.
    fn tie(&self, lo: Self::Key, hi: Self::Key) -> bool;
    /// The value of a row with key `k`.
    fn value(&self, k: Self::Key) -> f64;
}

struct ListCursor<'a> {
    rows: &'a [u32],
    col: &'a [f64],
    at: usize,
}

impl RowCursor for ListCursor<'_> {
    type Key = f64;
    #[inline(always)]
    fn next_row(&mut self) -> (u32, f64) {
        let i = self.next_row_only();
        (i, self.col[i as usize])
    }
    #[inline(always)]
    fn next_row_only(&mut self) -> u32 {
        let i = self.rows[self.at];
        self.at += 1;
        i
    }
    #[inline(always)]
    fn tie(&self, lo: f64, hi: f64) -> bool {
        hi <= lo + FEATURE_THRESHOLD
    }
    #[inline(always)]
    fn value(&self, k: f64) -> f64 {
        k
    }
}

struct BitCursor<'a> {
    /// The word being read, the word after it, and the rank of the first's bit 0.
    cur: u64,
    next: u64,
    base: usize,
    /// The indicator's rows by rank and first ranks past a tie ([`Ranks`]), and values.
    row: &'a [u8],
    past_tie: &'a [u8],
    col: &'a [f64],
}

impl RowCursor for BitCursor<'_> {
    type Key = usize;
    #[inline(always)]
    fn next_row(&mut self) -> (u32, usize) {
        if self.cur == 0 {
            self.cur = std::mem::take(&mut self.next);
            self.base = 64;
        }
        let r = (self.base + self.cur.trailing_zeros() as usize) & 127;
        self.cur &= self.cur.wrapping_sub(1);
        (u32::from(self.row[r]), r)
    }
    #[inline(always)]
    fn tie(&self, lo: usize, hi: usize) -> bool {
        hi < usize::from(self.past_tie[lo])
    }
    #[inline(always)]
    fn value(&self, k: usize) -> f64 {
        self.col[usize::from(self.row[k])]
    }
}

/// What the split search of a node needs to know of it.
#[derive(Debug, Clone, Copy)]
struct NodeScan {
    /// Sum of w and of w y over the node's rows.
    sw: f64,
    swy: f64,
    /// swy^2 / sw.
    parent_score: f64,
    /// A split must beat the best so far by more than this.
    tol: f64,
    min_leaf: usize,
    /// Whether the division-free comparison is safe (see `scan_ordered`).
    prefilter: bool,
}

/// The best threshold of one indicator at a node, over the node's rows in that
/// indicator's order, against the best split found so far (`best`, updated in place when
/// beaten by more than `tol`). Every candidate leaves at least `min_leaf` rows on each
/// side and falls between distinct values.
///
/// When `prefilter` is set (the caller has checked that weights and weighted outcomes are
/// far from overflow and underflow), a candidate is first compared without dividing:
/// its score lwy^2/lw + rwy^2/rw times lw rw is checked against the score to beat, with a
/// relative slack of 1e-9 and an absolute one of 1e-270, far wider than the rounding of
/// either form. Only candidates that pass are scored exactly, so the choice is the same
/// as scoring every candidate exactly; most candidates skip the two divisions.
/// Kept out of line so its loop gets the registers to itself.
#[inline(never)]
fn scan_ordered<C: RowCursor>(
    mut rows: C,
    n: usize,
    wwy: &[[f64; 2]],
    node: NodeScan,
    f: usize,
    best: &mut Option<(f64, usize, f64)>,
) {
    let NodeScan {
        sw,
        swy,
        parent_score,
        tol,
        min_leaf: ml,
        prefilter,
    } = node;
    let to_beat = |best: &Option<(f64, usize, f64)>| match best {
        Some((g, _, _)) if prefilter => (g + tol + parent_score) * (1.0 - 1e-9),
        _ => f64::NEG_INFINITY,
    };
    let mut bound = to_beat(best);
    let (mut lw, mut lwy) = (0.0, 0.0);
    // Rows that go left whatever the threshold (ml - 1 of them).
    for _ in 0..ml - 1 {
        let [a, b] = wwy[rows.next_row_only() as usize];
        lw += a;
        lwy += b;
    }
    // Candidates: the first k + 1 rows go left, ml <= k + 1 <= n - ml; `row` is row k,
    // `a` its key, and `next` row k + 1.
    let (mut row, mut a) = rows.next_row();
    for _ in 0..n + 1 - 2 * ml {
        let [wi, wyi] = wwy[row as usize];
        lw += wi;
        lwy += wyi;
        let (next, b) = rows.next_row();
        row = next;
        let lo = a;
        a = b;
        // One branch per candidate, rarely not taken once a good split is known: the
        // reasons to skip (a tie between values, an empty side, the division-free
        // comparison) combined without short-circuiting.
        let rw = sw - lw;
        let rwy = swy - lwy;
        let d = lw * rw;
        let skip = rows.tie(lo, b)
            | (lw <= 0.0)
            | (rw <= 0.0)
            | (lwy * lwy * rw + rwy * rwy * lw < bound * d - 1e-270);
        if skip {
            continue;
        }
        let gain = lwy * lwy / lw + rwy * rwy / rw - parent_score;
        if best.is_none_or(|(g, _, _)| gain > g + tol) {
            let (lo, b) = (rows.value(lo), rows.value(b));
            let mut thr = lo + (b - lo) / 2.0;
            if thr >= b {
                thr = lo;
            }
            *best = Some((gain, f, thr));
            bound = to_beat(best);
        }
    }
}

/// Grow a tree on `rows` (indices into x; repeated rows are not allowed, weights carry
/// multiplicity) with weights `w` (indexed like x's rows).
pub fn grow<R: Rng>(
    x: ArrayView2<f64>,
    y: ArrayView1<f64>,
    w: &[f64],
    rows: Vec<usize>,
    params: TreeParams,
    cand: Candidates<R>,
) -> Tree {
    grow_presorted(&Presorted::new(x), y, w, rows, params, cand)
}

/// [`Grower::grow`] with working memory of its own.
pub fn grow_presorted<R: Rng>(
    pre: &Presorted,
    y: ArrayView1<f64>,
    w: &[f64],
    rows: Vec<usize>,
    params: TreeParams,
    cand: Candidates<R>,
) -> Tree {
    Grower::new(pre).grow(y, w, rows, params, cand)
}

/// Grows trees on presorted rows, keeping its working memory from one tree to the next
/// (a forest's trees, a boosting's rounds).
///
/// All of a tree's lists live in one arena: p + 1 segments of the root's row count, one
/// per indicator (rows in that indicator's order) and one of rows in ascending order (sums
/// run in that order). A node owns the same range `start..start + n` of every segment;
/// a split rearranges that range stably so the left child owns its front and the right
/// child its back (for extremely randomised splits only the rows segment is kept: they need
/// no order). Nothing is allocated per node, and the segments of a child that will
/// not be split (too few rows, or at the depth limit) are not rearranged at all. The trees
/// are those of a grower that sorts the node's rows at every node (tested bit for bit).
pub struct Grower<'p> {
    pre: &'p Presorted,
    lists: Vec<u32>,
    tmp: Vec<u32>,
    flag: Vec<bool>,
    /// (w, w * y) per row.
    wwy: Vec<[f64; 2]>,
    draw: FeatureDraw,
    /// Per indicator, its bitset at the node being split ([`Lists::Bits`]).
    node_bits: Vec<u128>,
    /// Nodes waiting to be split, the indicators tried at a node, and for extremely
    /// randomised splits each drawn indicator's (min, max) at the node and its threshold.
    stack: Vec<Pending>,
    features: Vec<usize>,
    span: Vec<(f64, f64)>,
    extra_thr: Vec<f64>,
    /// Tests set this to grow with a given kind of lists instead of the one picked.
    forced_lists: Option<Lists>,
}

/// A node waiting to be split: its index, the start of its range, its row count, its
/// depth, and its sums of w and w y (summed over its rows in ascending row order).
type Pending = (usize, usize, usize, usize, (f64, f64));

/// Which of a node's lists the grower keeps through the splits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Lists {
    /// The rows and every indicator's order (each split rearranges all p + 1).
    Every,
    /// The rows only; up to 128 training rows, an indicator drawn at a node gets a
    /// bitset over its ranks ([`rank_bits`]) that the scan walks.
    Bits,
    /// The rows only (extremely randomised splits need no order).
    Rows,
}

impl<'p> Grower<'p> {
    pub fn new(pre: &'p Presorted) -> Grower<'p> {
        Grower {
            pre,
            lists: Vec::new(),
            tmp: vec![0; pre.n + 1],
            flag: vec![false; pre.n],
            wwy: vec![[0.0; 2]; pre.n],
            draw: FeatureDraw::new(pre.p),
            node_bits: vec![0; pre.p],
            stack: Vec::new(),
            features: Vec::with_capacity(pre.p),
            span: vec![(0.0, 0.0); pre.p],
            extra_thr: Vec::with_capacity(pre.p),
            forced_lists: None,
        }
    }

    /// Grow one tree; see [`grow`] for `rows` and `w`.
    pub fn grow<R: Rng>(
        &mut self,
        y: ArrayView1<f64>,
        w: &[f64],
        mut rows: Vec<usize>,
        params: TreeParams,
        mut cand: Candidates<R>,
    ) -> Tree {
        let pre = self.pre;
        let (nall, p) = (pre.n, pre.p);
        rows.sort_unstable();
        rows.dedup();
        let Grower {
            lists,
            tmp,
            flag,
            wwy,
            draw,
            node_bits,
            stack,
            features,
            span,
            extra_thr,
            forced_lists,
            ..
        } = self;
        // Extremely randomised splits scan the node's rows in row order, so the arena keeps
        // only the rows. When at most half the indicators are tried at a node (a forest's
        // usual share) and there are at most 128 training rows, the arena keeps only the
        // rows too, and each indicator drawn at a node gets a bitset over its ranks that the
        // scan walks. Otherwise every order is rearranged at each split. Measured: a forest
        // trying a third of 90 indicators fits faster with bitsets; one trying all of them,
        // or a boosting, faster with every order kept; and at 390 rows, making a drawn
        // order from a bitset in memory was no faster than keeping every order. The trees
        // are the same whichever is kept (tested). (Sorting each drawn indicator's ranks at
        // the node executed fewer instructions than keeping every order, but took longer.)
        let mode = forced_lists.unwrap_or(match cand {
            Candidates::Extra { .. } => Lists::Rows,
            Candidates::Sample { m, .. } if 2 * m <= p && nall <= 128 && !pre.nan => Lists::Bits,
            _ => Lists::Every,
        });
        debug_assert!(
            mode != Lists::Bits
                || (nall <= 128 && !pre.nan && matches!(cand, Candidates::Sample { .. }))
        );
        debug_assert!(mode != Lists::Rows || matches!(cand, Candidates::Extra { .. }));
        draw.reset();
        for (i, v) in wwy.iter_mut().enumerate() {
            *v = [w[i], w[i] * y[i]];
        }
        // The division-free comparison of `scan_ordered` is exact only far from overflow
        // and underflow: every weight in [1e-30, 1e30] and every |sum of w y| <= 1e30.
        let prefilter = {
            let (mut wmin, mut sw, mut swa) = (f64::INFINITY, 0.0, 0.0);
            for &i in &rows {
                let [a, b] = wwy[i];
                wmin = wmin.min(a);
                sw += a;
                swa += b.abs();
            }
            wmin >= 1e-30 && sw <= 1e30 && swa <= 1e30
        };
        let n0 = rows.len();
        // The arena holds p + 1 segments of n0 (and one slot of slack); it is sized for
        // the largest tree once and never cleared: every slot read is written first.
        let need = (p + 1) * nall + 1;
        if lists.len() < need {
            lists.resize(need, 0);
        }
        if mode != Lists::Every {
            // Only the rows segment below.
        } else if n0 == nall {
            lists[..p * n0].copy_from_slice(&pre.order);
        } else {
            // Branch-free filter of every indicator's order to the rows in.
            flag.fill(false);
            for &i in &rows {
                flag[i] = true;
            }
            let mut a = 0usize;
            for &i in &pre.order {
                lists[a] = i;
                a += flag[i as usize] as usize;
            }
        }
        for (slot, &i) in lists[p * n0..(p + 1) * n0].iter_mut().zip(&rows) {
            *slot = i as u32;
        }
        let wwy = &wwy[..];
        let sums = |rs: &[u32]| {
            let (mut sw, mut swy) = (0.0, 0.0);
            for &i in rs {
                let [a, b] = wwy[i as usize];
                sw += a;
                swy += b;
            }
            (sw, swy)
        };
        let mean = |(sw, swy): (f64, f64)| if sw > 0.0 { swy / sw } else { 0.0 };
        let leaf = |value: f64| Node {
            feature: usize::MAX,
            threshold: 0.0,
            left: 0,
            right: 0,
            value,
            gain: 0.0,
        };
        let root = sums(&lists[p * n0..(p + 1) * n0]);
        let mut nodes: Vec<Node> = vec![leaf(mean(root))];
        // Training rows reaching each node.
        let mut reach: Vec<u32> = vec![n0 as u32];
        let splittable = |n: usize, depth: usize| depth < params.depth && n >= 2 * params.min_leaf;
        stack.clear();
        if splittable(n0, 0) {
            stack.push((0, 0, n0, 0, root));
        }
        let mut scans: Vec<[u32; 2]> = Vec::new();
        features.clear();
        features.extend(0..p);
        let ml = params.min_leaf;
        let ranks = (mode == Lists::Bits).then(|| pre.ranks());
        while let Some((ni, start, n, depth, (sw, swy))) = stack.pop() {
            let seg = |f: usize| f * n0 + start..f * n0 + start + n;
            // The indicators' segments, and this node's rows.
            let (ords, rowseg) = lists.split_at_mut(p * n0);
            let rs: &[u32] = &rowseg[start..start + n];
            let ranked = |f: usize| f * nall..(f + 1) * nall;
            if sw <= 0.0 {
                continue;
            }
            let parent_score = swy * swy / sw;
            extra_thr.clear();
            match &mut cand {
                Candidates::All => {}
                Candidates::Sample { m, rng } => {
                    if let Some(t) = ranks {
                        // Each drawn indicator's bitset at the node, four indicators to a
                        // pass over the rows. It varies when its lowest and highest ranks
                        // are not tied (no value is NaN: the same as
                        // hi > lo + FEATURE_THRESHOLD).
                        let varies_all = |fs: &[usize], vary: &mut [bool]| {
                            let mut k = 0;
                            while k < fs.len() {
                                let take = (fs.len() - k).min(4);
                                let mut bits = [0u128; 4];
                                if take == 4 {
                                    let mut tabs: [&[u8]; 4] = [&[]; 4];
                                    for (j, tab) in tabs.iter_mut().enumerate() {
                                        *tab = &t.rank[ranked(fs[k + j])];
                                    }
                                    bits = rank_bits4(rs, tabs);
                                } else {
                                    for (j, b) in bits.iter_mut().enumerate().take(take) {
                                        *b = rank_bits(rs, &t.rank[ranked(fs[k + j])]);
                                    }
                                }
                                for j in 0..take {
                                    let (f, b) = (fs[k + j], bits[j]);
                                    node_bits[f] = b;
                                    let (lo, hi) = (b.trailing_zeros(), 127 - b.leading_zeros());
                                    vary[k + j] = hi as usize
                                        >= usize::from(t.next[ranked(f)][lo as usize & 127]);
                                }
                                k += take;
                            }
                        };
                        draw.draw_batched(*rng, *m, varies_all, features)
                    } else {
                        let varies = |f: usize| {
                            let col = pre.col(f);
                            let o = &ords[seg(f)];
                            col[o[n - 1] as usize] > col[o[0] as usize] + FEATURE_THRESHOLD
                        };
                        draw.draw(*rng, *m, varies, features)
                    }
                }
                Candidates::Extra { m, rng } => {
                    let varies = |f: usize| {
                        let col = pre.col(f);
                        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
                        for &i in rs {
                            let v = col[i as usize];
                            lo = lo.min(v);
                            hi = hi.max(v);
                        }
                        span[f] = (lo, hi);
                        hi > lo + FEATURE_THRESHOLD
                    };
                    draw.draw(*rng, *m, varies, features);
                    extra_thr.extend(features.iter().map(|&f| {
                        let (lo, hi) = span[f];
                        let u: f64 = rng.gen();
                        lo + u * (hi - lo)
                    }));
                }
            }
            let mut best: Option<(f64, usize, f64)> = None; // (gain, feature, threshold)
            scans.push([n as u32, features.len() as u32]);
            let tol = 1e-12 * parent_score.abs().max(1e-300);
            for (fpos, &f) in features.iter().enumerate() {
                let col = pre.col(f);
                if !extra_thr.is_empty() {
                    let thr = extra_thr[fpos];
                    if thr.is_nan() {
                        continue;
                    }
                    // Branch-free (the side of a row is a coin flip to the branch
                    // predictor): a row on the right adds +0.0 (its bits masked off),
                    // which leaves both sums exactly as skipping it would (they start at
                    // +0.0, so they are never -0.0).
                    let (mut lw, mut lwy, mut ln) = (0.0f64, 0.0f64, 0usize);
                    for &i in rs {
                        let i = i as usize;
                        let go = col[i] <= thr;
                        let mask = 0u64.wrapping_sub(go as u64);
                        let [a, b] = wwy[i];
                        lw += f64::from_bits(a.to_bits() & mask);
                        lwy += f64::from_bits(b.to_bits() & mask);
                        ln += go as usize;
                    }
                    let rw = sw - lw;
                    if ln < ml || n - ln < ml || lw <= 0.0 || rw <= 0.0 {
                        continue;
                    }
                    let rwy = swy - lwy;
                    let gain = lwy * lwy / lw + rwy * rwy / rw - parent_score;
                    if best.is_none_or(|(g, _, _)| gain > g) {
                        best = Some((gain, f, thr));
                    }
                    continue;
                }
                let node = NodeScan {
                    sw,
                    swy,
                    parent_score,
                    tol,
                    min_leaf: ml,
                    prefilter,
                };
                if let Some(t) = ranks {
                    let bits = node_bits[f];
                    let rows = BitCursor {
                        cur: bits as u64,
                        next: (bits >> 64) as u64,
                        base: 0,
                        row: &t.row[ranked(f)],
                        past_tie: &t.next[ranked(f)],
                        col,
                    };
                    scan_ordered(rows, n, wwy, node, f, &mut best);
                } else {
                    let rows = ListCursor {
                        rows: &ords[seg(f)],
                        col,
                        at: 0,
                    };
                    scan_ordered(rows, n, wwy, node, f, &mut best);
                }
            }
            let Some((gain, f, thr)) = best else { continue };
            if gain <= 0.0 {
                continue;
            }
            let col = pre.col(f);
            // Branch-free, as in the extremely randomised scan above: each side adds +0.0
            // for a row of the other side, which leaves its sums exactly as skipping it.
            let (mut l, mut r) = ((0.0f64, 0.0f64), (0.0f64, 0.0f64));
            let mut ln = 0;
            for &i in rs {
                let go = col[i as usize] <= thr;
                flag[i as usize] = go;
                ln += go as usize;
                let mask = 0u64.wrapping_sub(go as u64);
                let [a, b] = wwy[i as usize];
                let (ab, bb) = (a.to_bits(), b.to_bits());
                l.0 += f64::from_bits(ab & mask);
                l.1 += f64::from_bits(bb & mask);
                r.0 += f64::from_bits(ab & !mask);
                r.1 += f64::from_bits(bb & !mask);
            }
            let rn = n - ln;
            let li = nodes.len();
            nodes.push(leaf(mean(l)));
            let ri = nodes.len();
            nodes.push(leaf(mean(r)));
            reach.extend([ln as u32, rn as u32]);
            nodes[ni] = Node {
                feature: f,
                threshold: thr,
                left: li as u32,
                right: ri as u32,
                value: nodes[ni].value,
                gain,
            };
            let keep = (splittable(ln, depth + 1), splittable(rn, depth + 1));
            if keep != (false, false) {
                for s in if mode == Lists::Every { 0 } else { p }..=p {
                    split_segment(&mut lists[seg(s)], flag, ln, keep, tmp);
                }
            }
            // Right pushed first so the left subtree is grown first (deterministic order).
            if keep.1 {
                stack.push((ri, start + ln, rn, depth + 1, r));
            }
            if keep.0 {
                stack.push((li, start, ln, depth + 1, l));
            }
        }
        Tree::new(nodes, scans, &reach)
    }
}

/// The grower as it was before presorting (a sort of the node's rows per tried indicator
/// at every node), kept to test that the presorted grower gives the same trees bit for bit.
#[cfg(test)]
pub(crate) fn grow_per_node_sort<R: Rng>(
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
    Tree::new(nodes, Vec::new(), &reach)
}

impl Regressor for TreeParams {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        let n = input.x.nrows();
        if n == 0 {
            return Err(FitError::Invalid("no training rows".into()));
        }
        let w: Vec<f64> = input.w.to_vec();
        let rows: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
        Ok(Box::new(grow::<rand_chacha::ChaCha8Rng>(
            input.x,
            input.y,
            &w,
            rows,
            *self,
            Candidates::All,
        )))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

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
                depth: if case % 2 == 0 { 3 } else { usize::MAX },
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
            let y =
                ndarray::Array1::from_shape_fn(n, |i| x[[i, 0]].powi(3) + g.gen_range(0.0..0.3));
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
            Tree::new(b, Vec::new(), &[])
        };
        assert_eq!((balanced.depth, balanced.first), (2, 2));
        // 30 training rows in each depth-2 leaf, one in each of the chain's 25 leaves:
        // mean depth (180 + 3 + ... + 26 + 26) / 115 = 4.8, first check after 5 steps.
        let mut reach = vec![1u32; nodes.len()];
        for i in [ll, lr, rl] {
            reach[i] = 30;
        }
        let t = Tree::new(nodes.clone(), Vec::new(), &reach);
        assert_eq!((t.depth, t.first), (26, 5));
        // Counted by leaves alone it is not lopsided (mean depth 13.6 against 26).
        assert_eq!(Tree::new(nodes, Vec::new(), &[]).first, 26);
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
}
