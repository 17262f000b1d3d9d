//! The grower: one tree grown node by node over an arena of row lists, in named steps
//! (pick the lists to keep, load the weights, fill the arena, then per node: draw the
//! candidates, search the best split, split the node).

use super::draw::FeatureDraw;
use super::fitted::{Node, Tree};
use super::presort::{rank_bits, rank_bits4, Presorted, Ranks};
use super::scan::{scan_ordered, BitCursor, ListCursor, NodeScan};
use super::{Candidates, TreeParams, FEATURE_THRESHOLD};
use ndarray::ArrayView1;
use rand::Rng;

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
    #[cfg(test)]
    pub(super) forced_lists: Option<Lists>,
}

/// A node waiting to be split.
#[derive(Debug, Clone, Copy)]
struct Pending {
    /// Its index in the tree's nodes.
    node: usize,
    /// The start of its range in every segment of the arena, and its row count.
    start: usize,
    n: usize,
    depth: usize,
    /// Its sums of w and w y (summed over its rows in ascending row order).
    sums: (f64, f64),
}

/// Which of a node's lists the grower keeps through the splits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Lists {
    /// The rows and every indicator's order (each split rearranges all p + 1).
    Every,
    /// The rows only; up to 128 training rows, an indicator drawn at a node gets a
    /// bitset over its ranks ([`rank_bits`]) that the scan walks.
    Bits,
    /// The rows only (extremely randomised splits need no order).
    Rows,
}

/// What stays fixed while one tree grows.
struct TreeRun<'p> {
    mode: Lists,
    params: TreeParams,
    /// Rows at the root: the length of each segment of the arena.
    n0: usize,
    /// Whether the scan's division-free comparison is safe (see [`scan_ordered`]).
    prefilter: bool,
    /// The byte rank tables, with [`Lists::Bits`].
    ranks: Option<&'p Ranks>,
}

impl TreeRun<'_> {
    /// Whether a node of `n` rows at `depth` may be split.
    fn splittable(&self, n: usize, depth: usize) -> bool {
        depth < self.params.depth && n >= 2 * self.params.min_leaf
    }
}

/// The tree as it grows: its nodes and the training rows reaching each.
struct Grown {
    nodes: Vec<Node>,
    reach: Vec<u32>,
    /// Benchmarks only: (rows, indicators scanned) of each node searched.
    #[cfg(feature = "bench-scans")]
    scans: Vec<[u32; 2]>,
}

impl Grown {
    fn into_tree(self) -> Tree {
        #[allow(unused_mut)]
        let mut tree = Tree::new(self.nodes, &self.reach);
        #[cfg(feature = "bench-scans")]
        {
            tree.scans = self.scans;
        }
        tree
    }
}

/// A leaf's value: the weighted mean outcome of its rows, 0 without weight.
fn leaf_mean((sw, swy): (f64, f64)) -> f64 {
    if sw > 0.0 {
        swy / sw
    } else {
        0.0
    }
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
            #[cfg(test)]
            forced_lists: None,
        }
    }

    /// Grow one tree; see [`grow`](super::grow) for `rows` and `w`.
    pub fn grow<R: Rng>(
        &mut self,
        y: ArrayView1<f64>,
        w: &[f64],
        mut rows: Vec<usize>,
        params: TreeParams,
        mut cand: Candidates<R>,
    ) -> Tree {
        let pre = self.pre;
        rows.sort_unstable();
        rows.dedup();
        let mode = self.pick_lists(&cand);
        self.draw.reset();
        let prefilter = self.load_weights(y, w, &rows);
        let n0 = rows.len();
        self.fill_arena(mode, &rows);
        let run = TreeRun {
            mode,
            params,
            n0,
            prefilter,
            ranks: (mode == Lists::Bits).then(|| pre.ranks()),
        };
        let root = self.sums(0, n0, n0);
        let mut grown = Grown {
            nodes: vec![Node::leaf(leaf_mean(root))],
            reach: vec![n0 as u32],
            #[cfg(feature = "bench-scans")]
            scans: Vec::new(),
        };
        self.stack.clear();
        if run.splittable(n0, 0) {
            self.stack.push(Pending {
                node: 0,
                start: 0,
                n: n0,
                depth: 0,
                sums: root,
            });
        }
        self.features.clear();
        self.features.extend(0..pre.p);
        while let Some(node) = self.stack.pop() {
            if node.sums.0 <= 0.0 {
                continue;
            }
            self.draw_candidates(&run, &node, &mut cand);
            #[cfg(feature = "bench-scans")]
            grown
                .scans
                .push([node.n as u32, self.features.len() as u32]);
            let Some((gain, f, thr)) = self.best_split(&run, &node) else {
                continue;
            };
            if gain <= 0.0 {
                continue;
            }
            self.split(&run, &node, (gain, f, thr), &mut grown);
        }
        grown.into_tree()
    }

    /// Which lists to keep through the splits.
    ///
    /// Extremely randomised splits scan the node's rows in row order, so the arena keeps
    /// only the rows. When at most half the indicators are tried at a node (a forest's
    /// usual share) and there are at most 128 training rows, the arena keeps only the
    /// rows too, and each indicator drawn at a node gets a bitset over its ranks that the
    /// scan walks. Otherwise every order is rearranged at each split. Measured: a forest
    /// trying a third of 90 indicators fits faster with bitsets; one trying all of them,
    /// or a boosting, faster with every order kept; and at 390 rows, making a drawn
    /// order from a bitset in memory was no faster than keeping every order. The trees
    /// are the same whichever is kept (tested). (Sorting each drawn indicator's ranks at
    /// the node executed fewer instructions than keeping every order, but took longer.)
    fn pick_lists<R: Rng>(&self, cand: &Candidates<R>) -> Lists {
        let pre = self.pre;
        let picked = match cand {
            Candidates::Extra { .. } => Lists::Rows,
            Candidates::Sample { m, .. } if 2 * m <= pre.p && pre.n <= 128 && !pre.nan => {
                Lists::Bits
            }
            _ => Lists::Every,
        };
        #[cfg(test)]
        let picked = self.forced_lists.unwrap_or(picked);
        debug_assert!(
            picked != Lists::Bits
                || (pre.n <= 128 && !pre.nan && matches!(cand, Candidates::Sample { .. }))
        );
        debug_assert!(picked != Lists::Rows || matches!(cand, Candidates::Extra { .. }));
        picked
    }

    /// Each row's (w, w y), and whether the scan's division-free comparison is safe for
    /// these rows: it is exact only far from overflow and underflow, with every weight in
    /// [1e-30, 1e30] and every |sum of w y| <= 1e30.
    fn load_weights(&mut self, y: ArrayView1<f64>, w: &[f64], rows: &[usize]) -> bool {
        let wwy = &mut self.wwy;
        for (i, v) in wwy.iter_mut().enumerate() {
            *v = [w[i], w[i] * y[i]];
        }
        let (mut wmin, mut sw, mut swa) = (f64::INFINITY, 0.0, 0.0);
        for &i in rows {
            let [a, b] = wwy[i];
            wmin = wmin.min(a);
            sw += a;
            swa += b.abs();
        }
        wmin >= 1e-30 && sw <= 1e30 && swa <= 1e30
    }

    /// The root's lists: every indicator's order filtered to `rows` (with
    /// [`Lists::Every`]), then the rows in ascending order. The arena holds p + 1
    /// segments of `rows.len()` (and one slot of slack); it is sized for the largest tree
    /// once and never cleared: every slot read is written first.
    fn fill_arena(&mut self, mode: Lists, rows: &[usize]) {
        let pre = self.pre;
        let (nall, p, n0) = (pre.n, pre.p, rows.len());
        let Grower { lists, flag, .. } = self;
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
            for &i in rows {
                flag[i] = true;
            }
            let mut a = 0usize;
            for &i in &pre.order {
                lists[a] = i;
                a += flag[i as usize] as usize;
            }
        }
        for (slot, &i) in lists[p * n0..(p + 1) * n0].iter_mut().zip(rows) {
            *slot = i as u32;
        }
    }

    /// Sums of w and w y over the `n` rows at `start` of the rows segment (segments of
    /// `n0`), in their ascending order.
    fn sums(&self, start: usize, n: usize, n0: usize) -> (f64, f64) {
        let p = self.pre.p;
        let rs = &self.lists[p * n0 + start..p * n0 + start + n];
        let (mut sw, mut swy) = (0.0, 0.0);
        for &i in rs {
            let [a, b] = self.wwy[i as usize];
            sw += a;
            swy += b;
        }
        (sw, swy)
    }

    /// The indicators tried at `node` into `features` (all of them for
    /// [`Candidates::All`], left as set at the root), with each drawn indicator's bitset
    /// ([`Lists::Bits`]) or its random threshold (extremely randomised splits, into
    /// `extra_thr`).
    fn draw_candidates<R: Rng>(&mut self, run: &TreeRun, node: &Pending, cand: &mut Candidates<R>) {
        let pre = self.pre;
        let (nall, p, n0) = (pre.n, pre.p, run.n0);
        let Pending { start, n, .. } = *node;
        let Grower {
            lists,
            draw,
            node_bits,
            features,
            span,
            extra_thr,
            ..
        } = self;
        let seg = |f: usize| f * n0 + start..f * n0 + start + n;
        // The indicators' segments, and this node's rows.
        let (ords, rowseg) = lists.split_at(p * n0);
        let rs: &[u32] = &rowseg[start..start + n];
        let ranked = |f: usize| f * nall..(f + 1) * nall;
        extra_thr.clear();
        match cand {
            Candidates::All => {}
            Candidates::Sample { m, rng } => {
                if let Some(t) = run.ranks {
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
    }

    /// The best split of `node` over the drawn `features`: (gain, indicator, threshold).
    fn best_split(&self, run: &TreeRun, node: &Pending) -> Option<(f64, usize, f64)> {
        let pre = self.pre;
        let (nall, p, n0) = (pre.n, pre.p, run.n0);
        let Pending {
            start,
            n,
            sums: (sw, swy),
            ..
        } = *node;
        let seg = |f: usize| f * n0 + start..f * n0 + start + n;
        let (ords, rowseg) = self.lists.split_at(p * n0);
        let rs: &[u32] = &rowseg[start..start + n];
        let ranked = |f: usize| f * nall..(f + 1) * nall;
        let wwy = &self.wwy[..];
        let parent_score = swy * swy / sw;
        let mut best: Option<(f64, usize, f64)> = None; // (gain, feature, threshold)
        let tol = 1e-12 * parent_score.abs().max(1e-300);
        for (fpos, &f) in self.features.iter().enumerate() {
            let col = pre.col(f);
            if !self.extra_thr.is_empty() {
                let thr = self.extra_thr[fpos];
                if thr.is_nan() {
                    continue;
                }
                let ml = run.params.min_leaf;
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
            let scan = NodeScan {
                sw,
                swy,
                parent_score,
                tol,
                min_leaf: run.params.min_leaf,
                prefilter: run.prefilter,
            };
            if let Some(t) = run.ranks {
                let bits = self.node_bits[f];
                let rows = BitCursor {
                    cur: bits as u64,
                    next: (bits >> 64) as u64,
                    base: 0,
                    row: &t.row[ranked(f)],
                    past_tie: &t.next[ranked(f)],
                    col,
                };
                scan_ordered(rows, n, wwy, scan, f, &mut best);
            } else {
                let rows = ListCursor {
                    rows: &ords[seg(f)],
                    col,
                    at: 0,
                };
                scan_ordered(rows, n, wwy, scan, f, &mut best);
            }
        }
        best
    }

    /// Split `node` on indicator `f` at `thr`: its two children become leaves of
    /// `grown`, their ranges of the kept lists are rearranged (only for children that
    /// will be split further), and those children wait on the stack.
    fn split(
        &mut self,
        run: &TreeRun,
        node: &Pending,
        (gain, f, thr): (f64, usize, f64),
        grown: &mut Grown,
    ) {
        let pre = self.pre;
        let (p, n0) = (pre.p, run.n0);
        let Pending {
            node: ni,
            start,
            n,
            depth,
            ..
        } = *node;
        let seg = |f: usize| f * n0 + start..f * n0 + start + n;
        let Grower {
            lists,
            tmp,
            flag,
            wwy,
            stack,
            ..
        } = self;
        let col = pre.col(f);
        // Branch-free, as in the extremely randomised scan: each side adds +0.0 for a row
        // of the other side, which leaves its sums exactly as skipping it.
        let (mut l, mut r) = ((0.0f64, 0.0f64), (0.0f64, 0.0f64));
        let mut ln = 0;
        for &i in &lists[seg(p)] {
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
        let nodes = &mut grown.nodes;
        let li = nodes.len();
        nodes.push(Node::leaf(leaf_mean(l)));
        let ri = nodes.len();
        nodes.push(Node::leaf(leaf_mean(r)));
        grown.reach.extend([ln as u32, rn as u32]);
        nodes[ni] = Node {
            feature: f,
            threshold: thr,
            left: li as u32,
            right: ri as u32,
            value: nodes[ni].value,
            gain,
        };
        let keep = (run.splittable(ln, depth + 1), run.splittable(rn, depth + 1));
        if keep != (false, false) {
            for s in if run.mode == Lists::Every { 0 } else { p }..=p {
                split_segment(&mut lists[seg(s)], flag, ln, keep, tmp);
            }
        }
        // Right pushed first so the left subtree is grown first (deterministic order).
        if keep.1 {
            stack.push(Pending {
                node: ri,
                start: start + ln,
                n: rn,
                depth: depth + 1,
                sums: r,
            });
        }
        if keep.0 {
            stack.push(Pending {
                node: li,
                start,
                n: ln,
                depth: depth + 1,
                sums: l,
            });
        }
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
