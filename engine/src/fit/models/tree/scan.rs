//! The split scan: the best threshold of one indicator at a node, over the node's rows in
//! that indicator's order, handed out by a cursor (from a kept row list or from a bitset
//! over ranks).

use super::FEATURE_THRESHOLD;

/// A node's rows in one indicator's order, handed out one at a time to the split scan:
/// from the arena's kept order or from a bitset over ranks ([`rank_bits`](super::presort::rank_bits)). Each row
/// comes with a key that tells ties apart: its value, or its rank. The caller takes at
/// most as many rows as the node has.
pub(super) trait RowCursor {
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

pub(super) struct ListCursor<'a> {
    pub(super) rows: &'a [u32],
    pub(super) col: &'a [f64],
    pub(super) at: usize,
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

pub(super) struct BitCursor<'a> {
    /// The word being read, the word after it, and the rank of the first's bit 0.
    pub(super) cur: u64,
    pub(super) next: u64,
    pub(super) base: usize,
    /// The indicator's rows by rank and first ranks past a tie
    /// ([`Ranks`](super::presort::Ranks)), and values.
    pub(super) row: &'a [u8],
    pub(super) past_tie: &'a [u8],
    pub(super) col: &'a [f64],
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
pub(super) struct NodeScan {
    /// Sum of w and of w y over the node's rows.
    pub(super) sw: f64,
    pub(super) swy: f64,
    /// swy^2 / sw.
    pub(super) parent_score: f64,
    /// A split must beat the best so far by more than this.
    pub(super) tol: f64,
    pub(super) min_leaf: usize,
    /// Whether the division-free comparison is safe (see `scan_ordered`).
    pub(super) prefilter: bool,
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
pub(super) fn scan_ordered<C: RowCursor>(
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
