//! The draw of the indicators tried at a split (forests, extremely randomised trees).

use rand::Rng;

/// Draws the indicators tried at a split: `m` of the `p` that vary at the node, without
/// replacement, listed in ascending order (ties between equal gains go to the lowest
/// indicator). A partial Fisher-Yates shuffle (Durstenfeld 1964) of a permutation reset
/// at each tree: from any starting permutation its leading entries are a uniform draw,
/// and skipping the constant ones leaves a uniform draw among the others. A branch-free
/// pass over a mask lists them in order, so nothing is sorted or allocated per split.
pub(super) struct FeatureDraw {
    perm: Vec<usize>,
    mask: Vec<bool>,
    vary: Vec<bool>,
}

impl FeatureDraw {
    pub(super) fn new(p: usize) -> FeatureDraw {
        FeatureDraw {
            perm: (0..p).collect(),
            mask: vec![false; p],
            vary: vec![false; p],
        }
    }

    /// Back to the identity permutation (at the start of each tree).
    pub(super) fn reset(&mut self) {
        for (k, v) in self.perm.iter_mut().enumerate() {
            *v = k;
        }
    }

    /// Draw `m` indicators for which `varies` holds: drawing goes on until `m` of them
    /// are found or every indicator was drawn, and only those are listed (as
    /// scikit-learn's splitters do, so `m` indicators that can split are tried whenever
    /// there are that many).
    pub(super) fn draw<R: Rng>(
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
    pub(super) fn draw_batched<R: Rng>(
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
