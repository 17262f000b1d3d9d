//! Presorting: every indicator's row order sorted once per fit, and for small panels the
//! same orders in bytes ([`Ranks`]) with the bitsets over ranks the grower makes from them.

use super::FEATURE_THRESHOLD;
use ndarray::ArrayView2;

/// A fit's training rows prepared once for growing many trees (a forest's trees, a
/// boosting's rounds): the indicators in column-major order, and each indicator's row
/// order sorted once by value (ties by row index). Growing then walks these orders instead
/// of sorting at every node: a node costs one pass over its rows per indicator (Breiman et
/// al. 1984, ch. 5; the presorting of SPRINT/SLIQ-style growers).
pub struct Presorted {
    pub(super) n: usize,
    pub(super) p: usize,
    /// `xt[f * n + i]` = x[i, f].
    xt: Vec<f64>,
    /// `order[f * n..(f + 1) * n]`: rows by ascending x[., f], ties by row.
    pub(super) order: Vec<u32>,
    /// Whether some value is NaN (the bitset grower's tie test assumes none).
    pub(super) nan: bool,
    /// The orders in bytes ([`Ranks`]), made at first use and only for at most 128 rows
    /// (only the bitset grower reads them).
    ranks: std::sync::OnceLock<Ranks>,
}

/// Every indicator's order in bytes, for at most 128 rows: small enough (three bytes per
/// row and indicator) to stay in the first-level cache while a tree is grown, where the
/// row lists and values (twelve bytes per row and indicator) do not.
pub(super) struct Ranks {
    /// `rank[f * n + i]`: row i's position in indicator f's order (its ordinal rank).
    pub(super) rank: Vec<u8>,
    /// `row[f * n + r]`: the row of rank r (`Presorted::order` in a byte).
    pub(super) row: Vec<u8>,
    /// `next[f * n + r]`: the first rank s > r whose value is not within
    /// [`FEATURE_THRESHOLD`] of rank r's (`!(x_s <= x_r + FEATURE_THRESHOLD)`), n if none.
    /// The values rise with the rank, so for ranks r < s the values tie exactly when
    /// s < next[r]: the split scan's tie test without reading a value (no value is NaN).
    pub(super) next: Vec<u8>,
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
    pub(super) fn ranks(&self) -> &Ranks {
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

    /// Whether some value is NaN.
    pub fn has_nan(&self) -> bool {
        self.nan
    }

    pub(super) fn col(&self, f: usize) -> &[f64] {
        &self.xt[f * self.n..(f + 1) * self.n]
    }
}

/// A node's rows in one indicator's order, made without sorting or rearranging: each
/// row's ordinal rank for the indicator (its position in the presorted order) sets one bit
/// of a bitset over ranks, and the set bits read in ascending order give the rows through
/// the presorted order ([`BitCursor`](super::scan::BitCursor)). That is the presorted order filtered to the
/// node's rows, which is what rearranging the order at every split keeps, at one pass over
/// the node's rows for each indicator drawn there instead of one per indicator at every
/// split. For at most 128 training rows (the bitset stays in two registers): bit r is set
/// when the row of rank r is one of `rows`. Each row's rank comes from a byte table and
/// its bit from [`RANK_BIT`], both small enough to stay in the first-level cache.
#[inline]
pub(super) fn rank_bits(rows: &[u32], rank: &[u8]) -> u128 {
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
pub(super) fn rank_bits4(rows: &[u32], rank: [&[u8]; 4]) -> [u128; 4] {
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
