//! Importances on the user's own indicators, whatever compression sits in between.
//!
//! * `permutation` (level `indicator`): for each fold, the fold's fitted pipeline (pool,
//!   fill, scale, compress, model and back-transform) predicts its own test rows again
//!   with indicator j's values replaced by values drawn, by a seeded permutation, from
//!   j's column over all rows (gaps included, so the fill stage sees them). Importance =
//!   mean squared error of the pooled out-of-fold predictions with j permuted minus
//!   without, averaged over `repeats` draws; `spread` is the standard deviation over the
//!   draws. The draws depend on the run's seed, the fold, the indicator (or group) and the
//!   repeat, not on the spec: every spec is scored against the same draws (common random
//!   draws, and a fold's permuted rows, once pooled and filled, are shared by all specs
//!   below that pool and fill ([`Draws`]). For a linear model y = x b + e with independent indicators this has
//!   expectation 2 b_j^2 var(x_j): the permuted column x'_j is independent of everything,
//!   so the prediction error gains b_j (x_j - x'_j), whose variance is 2 b_j^2 var(x_j).
//! * `permutation` (level `group`): the same with every indicator of a codebook group
//!   permuted by one shared row permutation, so collinear indicators share credit.
//! * `coefficient` / `impurity` (native): the model's own importance of its input
//!   columns (|coefficient| x training sd; impurity decrease normalised to sum 1),
//!   averaged over folds. A missingness flag counts for its indicator; a component's
//!   importance is spread over indicators in proportion to their absolute loadings.
//!
//! Pools: the pool is the first stage of a spec's chain, so an indicator outside a fold's
//! fitted pool cannot move that fold's predictions; its permutation contributes exactly
//! the unpermuted error of that fold (added without re-predicting). An indicator outside
//! the pool of every fold (a fixed pool's non-members; for `screen`, an indicator never
//! screened in) gets importance 0 of every kind and `in_pool = false`; a group, when none
//! of its members is.
//!
//! Predictions go through the spec's own back-transform of the fold (the plain inverse,
//! or the smearing estimate over that fold's training residuals).
//!
//! When a fold's importances cannot be computed (a permuted prediction that is not finite,
//! e.g. a transform's inverse overflowing on a permuted collinear indicator, or a panic),
//! the spec keeps its status and metrics but gets no importance rows, and a note in the
//! `notes` column of `specs` says which fold and indicator; the run summary counts them.

use crate::models::Predictor;
use crate::panel::Panel;
use crate::space::Spec;
use crate::stages::fill::FLAG_SUFFIX;
use crate::stages::predict_chain;
use crate::stages::Fitted;
use crate::streams::mix;
use crate::transform::Target;
use ndarray::{Array1, Array2, ArrayView2, Axis};
use rand::seq::SliceRandom;
use rand::SeedableRng;
use std::collections::{BTreeMap, HashMap};
use std::sync::{Arc, Mutex, OnceLock};

// Stream of the permutation draws (mixed with the run's seed; the same for every spec).
use crate::streams::PERMUTATION_DRAWS as DRAW_STREAM;

/// Most bytes of filled permuted rows kept under one fill, over all its folds (the
/// default of `Sweep::draws_budget`).
pub const DRAWS_BUDGET: usize = 48 << 20;

/// Bytes left to keep under one fill, shared by its folds' [`Draws`].
pub type DrawsBudget = Arc<Mutex<usize>>;

/// A fresh budget of `bytes`.
pub fn draws_budget(bytes: usize) -> DrawsBudget {
    Arc::new(Mutex::new(bytes))
}

/// A filled draw, computed by whichever spec asks first.
type Slot = Arc<OnceLock<Array2<f64>>>;

/// One fold's permuted test rows after its fitted pool and fill (the first `depth` stages
/// of the chain), kept for every spec below that fill: each (permuted columns, repeat) is
/// filled once, on first use. Once the fill's
/// budget (`Sweep::draws_budget` over all its folds) is spent, further draws are computed by
/// each spec without being kept.
/// Results are the same with or without it (tested).
pub struct Draws {
    /// Leading stages of a chain whose output is kept (the pool and the fill).
    depth: usize,
    slots: Mutex<HashMap<(Vec<usize>, usize), Slot>>,
    bytes_each: usize,
    left: DrawsBudget,
    /// Nanoseconds spent filling kept draws (the shared work), summed over threads.
    nanos: Arc<std::sync::atomic::AtomicU64>,
}

impl Draws {
    /// Output of the first `depth` stages of a chain for `n_test` rows and `cols_out`
    /// columns, spending from `left`; the time spent filling kept draws is added to
    /// `nanos`.
    pub fn new(
        depth: usize,
        n_test: usize,
        cols_out: usize,
        left: DrawsBudget,
        nanos: Arc<std::sync::atomic::AtomicU64>,
    ) -> Draws {
        Draws {
            depth,
            slots: Mutex::new(HashMap::new()),
            bytes_each: n_test.saturating_mul(cols_out).saturating_mul(8).max(1),
            left,
            nanos,
        }
    }

    /// The filled rows of draw (`cols`, `r`), computed by `make` on first use. Others
    /// asking meanwhile wait for it, so `make` must not wait on rayon work itself (no
    /// stage runs rayon inside).
    fn get(&self, cols: &[usize], r: usize, make: impl FnOnce() -> Array2<f64>) -> Slot {
        let slot = {
            let mut slots = match self.slots.lock() {
                Ok(g) => g,
                Err(p) => p.into_inner(),
            };
            match slots.get(&(cols.to_vec(), r)) {
                Some(s) => Some(s.clone()),
                None => {
                    let mut left = match self.left.lock() {
                        Ok(g) => g,
                        Err(p) => p.into_inner(),
                    };
                    if *left >= self.bytes_each {
                        *left -= self.bytes_each;
                        let s = Arc::new(OnceLock::new());
                        slots.insert((cols.to_vec(), r), s.clone());
                        Some(s)
                    } else {
                        None
                    }
                }
            }
        };
        match slot {
            Some(s) => {
                s.get_or_init(|| {
                    let t0 = std::time::Instant::now();
                    let v = make();
                    let ns = u64::try_from(t0.elapsed().as_nanos()).unwrap_or(u64::MAX);
                    self.nanos
                        .fetch_add(ns, std::sync::atomic::Ordering::Relaxed);
                    v
                });
                s
            }
            None => {
                let s = Arc::new(OnceLock::new());
                s.get_or_init(make);
                s
            }
        }
    }
}

pub use crate::config::importance::{ImportanceSection, KINDS};

/// One row of the importance table.
#[derive(Debug, Clone, PartialEq)]
pub struct ImportanceRow {
    pub name: Arc<str>,
    /// `indicator` or `group`.
    pub level: &'static str,
    pub kind: &'static str,
    pub importance: f64,
    pub spread: f64,
    pub rank: u32,
    pub in_pool: bool,
}

/// Everything a fold contributes, gathered while the spec runs.
pub struct Accumulator<'a> {
    panel: &'a Panel,
    cfg: &'a ImportanceSection,
    stream: u64,
    /// Indicators the spec's pool may hold (panel column indices): a fixed pool's
    /// members, every indicator for `screen`.
    pool: Vec<usize>,
    /// Per indicator: in the fitted pool of at least one fold so far.
    used: Vec<bool>,
    groups: Vec<(String, Vec<usize>)>,
    sse_ind: BTreeMap<usize, Vec<f64>>,
    sse_grp: Vec<Vec<f64>>,
    sse_base: f64,
    n: usize,
    native_kind: Option<&'static str>,
    native_sum: Vec<f64>,
    native_folds: usize,
}

fn indicator_of(name: &str) -> &str {
    name.strip_suffix(FLAG_SUFFIX).unwrap_or(name)
}

impl<'a> Accumulator<'a> {
    pub fn new(panel: &'a Panel, spec: &Spec, cfg: &'a ImportanceSection, seed: u64) -> Self {
        let pool: Vec<usize> = match &spec.choice(crate::decl::Dim::Pool).members {
            Some(m) => m.to_vec(),
            None => (0..panel.indicators.len()).collect(),
        };
        let groups: Vec<(String, Vec<usize>)> = panel.groups().into_iter().collect();
        let r = cfg.repeats;
        Accumulator {
            panel,
            cfg,
            stream: mix(seed, DRAW_STREAM),
            sse_ind: pool.iter().map(|&j| (j, vec![0.0; r])).collect(),
            sse_grp: vec![vec![0.0; r]; groups.len()],
            pool,
            used: vec![false; panel.indicators.len()],
            groups,
            sse_base: 0.0,
            n: 0,
            native_kind: None,
            native_sum: vec![0.0; panel.indicators.len()],
            native_folds: 0,
        }
    }

    fn draw(&self, fi: usize, key: u64, r: usize) -> Vec<usize> {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(mix(
            mix(self.stream, fi as u64 + 1),
            key * 1_000 + r as u64,
        ));
        let mut perm: Vec<usize> = (0..self.panel.n_rows()).collect();
        perm.shuffle(&mut rng);
        perm
    }

    fn sse(&self, pred: &Array1<f64>, test: &[usize]) -> f64 {
        pred.iter()
            .zip(test)
            .map(|(p, &i)| (self.panel.y[i] - p).powi(2))
            .sum()
    }

    /// Predictions of the fold's pipeline on its test rows with `cols` replaced by draw
    /// (`key`, `r`). With `draws`, the filled rows come from (or go to) the fold's shared
    /// store and only the rest of the chain runs here.
    #[allow(clippy::too_many_arguments)]
    fn permuted_predict(
        &self,
        fi: usize,
        chain: &[Arc<dyn Fitted>],
        model: &dyn Predictor,
        target: &dyn Target,
        draws: Option<&Draws>,
        raw: &Array2<f64>,
        test: &[usize],
        cols: &[usize],
        key: u64,
        r: usize,
    ) -> Array1<f64> {
        let permuted = || {
            let perm = self.draw(fi, key, r);
            let mut x = raw.clone();
            for &j in cols {
                for (k, row) in perm.iter().take(test.len()).enumerate() {
                    x[[k, j]] = self.panel.x[[*row, j]];
                }
            }
            x
        };
        match draws.filter(|d| d.depth > 0 && d.depth <= chain.len()) {
            Some(d) => {
                let (head, rest) = chain.split_at(d.depth);
                let slot = d.get(cols, r, || {
                    let mut x = permuted();
                    for st in head {
                        x = st.apply_rows(x.view(), Some(test));
                    }
                    x
                });
                match slot.get() {
                    Some(filled) => predict_chain(rest, model, target, filled.view(), Some(test)),
                    None => predict_chain(chain, model, target, permuted().view(), Some(test)),
                }
            }
            None => predict_chain(chain, model, target, permuted().view(), Some(test)),
        }
    }

    /// Add one fold: its fitted chain and model, names of the model's input columns, the
    /// model's training rows, the test rows and their unpermuted predictions, and the
    /// fold's shared store of pooled and filled draws if there is one. `chain[0]` is the
    /// fitted pool (the first stage, [`crate::space::STAGE_DIMENSIONS`]): its output
    /// columns are the indicators this fold's predictions can depend on.
    /// An error says why the fold's importances cannot be computed (the accumulator must
    /// then be discarded).
    #[allow(clippy::too_many_arguments)]
    pub fn add_fold(
        &mut self,
        fi: usize,
        chain: &[Arc<dyn Fitted>],
        draws: Option<&Draws>,
        model: &dyn Predictor,
        target: &dyn Target,
        input_names: &[String],
        x_train: ArrayView2<f64>,
        test: &[usize],
        pred: &Array1<f64>,
    ) -> Result<(), String> {
        let finite = |p: &Array1<f64>, what: &dyn Fn() -> String| -> Result<(), String> {
            match p.iter().position(|v| !v.is_finite()) {
                Some(k) => Err(format!(
                    "{} gives a non-finite prediction for row {}",
                    what(),
                    test[k] + 1
                )),
                None => Ok(()),
            }
        };
        finite(pred, &|| "the unpermuted pipeline".to_string())?;
        let unpermuted = self.sse(pred, test);
        self.sse_base += unpermuted;
        self.n += test.len();
        // The fold's fitted pool; without one (no chain), every candidate.
        let mut in_fold = vec![false; self.panel.indicators.len()];
        match chain.first() {
            Some(pool) => {
                for name in pool.names() {
                    if let Some(j) = self.panel.indicator_index(name) {
                        in_fold[j] = true;
                    }
                }
            }
            None => {
                for &j in &self.pool {
                    in_fold[j] = true;
                }
            }
        }
        for (u, f) in self.used.iter_mut().zip(&in_fold) {
            *u |= *f;
        }
        let raw = self.panel.x.select(Axis(0), test);
        if self.cfg.wants("permutation") {
            for pi in 0..self.pool.len() {
                let j = self.pool[pi];
                if !in_fold[j] {
                    // Outside this fold's pool: the predictions are the unpermuted ones.
                    if let Some(v) = self.sse_ind.get_mut(&j) {
                        v.iter_mut().for_each(|s| *s += unpermuted);
                    }
                    continue;
                }
                for r in 0..self.cfg.repeats {
                    let p = self.permuted_predict(
                        fi,
                        chain,
                        model,
                        target,
                        draws,
                        &raw,
                        test,
                        &[j],
                        j as u64 + 1,
                        r,
                    );
                    finite(&p, &|| {
                        format!("permuting `{}` (draw {r})", self.panel.indicators[j])
                    })?;
                    let s = self.sse(&p, test);
                    if let Some(v) = self.sse_ind.get_mut(&j) {
                        v[r] += s;
                    }
                }
            }
        }
        if self.cfg.wants("group") {
            for g in 0..self.groups.len() {
                let members: Vec<usize> = self.groups[g]
                    .1
                    .iter()
                    .copied()
                    .filter(|&j| in_fold[j])
                    .collect();
                if members.is_empty() {
                    self.sse_grp[g].iter_mut().for_each(|s| *s += unpermuted);
                    continue;
                }
                // A one-indicator group draws exactly as its indicator does.
                let key = if members.len() == 1 {
                    members[0] as u64 + 1
                } else {
                    1_000_000 + g as u64
                };
                for r in 0..self.cfg.repeats {
                    let p = self.permuted_predict(
                        fi, chain, model, target, draws, &raw, test, &members, key, r,
                    );
                    finite(&p, &|| {
                        format!("permuting group `{}` (draw {r})", self.groups[g].0)
                    })?;
                    self.sse_grp[g][r] += self.sse(&p, test);
                }
            }
        }
        if self.cfg.wants("native") {
            if let Some((kind, v)) = model.native(x_train) {
                self.native_kind = Some(kind);
                self.native_folds += 1;
                let loadings = chain.last().and_then(|s| s.loadings());
                for (c, imp) in v.iter().enumerate() {
                    match &loadings {
                        Some((l, names)) => {
                            let total: f64 = l.row(c).iter().map(|x| x.abs()).sum();
                            if total > 0.0 {
                                for (q, name) in names.iter().enumerate() {
                                    if let Some(j) = self.panel.indicator_index(indicator_of(name))
                                    {
                                        self.native_sum[j] += imp * l[[c, q]].abs() / total;
                                    }
                                }
                            }
                        }
                        None => {
                            if let Some(j) = input_names
                                .get(c)
                                .and_then(|n| self.panel.indicator_index(indicator_of(n)))
                            {
                                self.native_sum[j] += imp;
                            }
                        }
                    }
                }
            }
        }
        Ok(())
    }

    /// The rows of this spec, ranks filled in.
    pub fn finish(self) -> Vec<ImportanceRow> {
        let n = self.n.max(1) as f64;
        let base = self.sse_base / n;
        let summarise = |v: &[f64]| -> (f64, f64) {
            let d: Vec<f64> = v.iter().map(|s| s / n - base).collect();
            let m = d.iter().sum::<f64>() / d.len().max(1) as f64;
            let sd = if d.len() > 1 {
                (d.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (d.len() - 1) as f64).sqrt()
            } else {
                0.0
            };
            (m, sd)
        };
        let names: Vec<Arc<str>> = self
            .panel
            .indicators
            .iter()
            .map(|s| Arc::from(s.as_str()))
            .collect();
        let mut out = Vec::new();
        let mut block = |level: &'static str, kind: &'static str, mut rows: Vec<ImportanceRow>| {
            rows.sort_by(|a, b| {
                b.importance
                    .total_cmp(&a.importance)
                    .then(b.in_pool.cmp(&a.in_pool))
                    .then(a.name.cmp(&b.name))
            });
            // Competition ranks: tied importances share the best rank of their tie (1, 2,
            // 2, 4), so no order between equal values (e.g. the exact zeros of indicators
            // outside a pool) is made up from names; rows stay sorted by name within a tie.
            let mut prev: Option<(f64, u32)> = None;
            for (k, r) in rows.iter_mut().enumerate() {
                r.rank = match prev {
                    Some((v, rank)) if v.total_cmp(&r.importance).is_eq() => rank,
                    _ => k as u32 + 1,
                };
                prev = Some((r.importance, r.rank));
                r.level = level;
                r.kind = kind;
            }
            out.extend(rows);
        };
        let row = |name: Arc<str>, importance: f64, spread: f64, in_pool: bool| ImportanceRow {
            name,
            level: "",
            kind: "",
            importance,
            spread,
            rank: 0,
            in_pool,
        };
        if self.cfg.wants("permutation") {
            let rows = (0..names.len())
                .map(|j| match self.sse_ind.get(&j).filter(|_| self.used[j]) {
                    Some(v) => {
                        let (m, sd) = summarise(v);
                        row(names[j].clone(), m, sd, true)
                    }
                    None => row(names[j].clone(), 0.0, 0.0, false),
                })
                .collect();
            block("indicator", "permutation", rows);
        }
        if self.cfg.wants("group") && !self.groups.is_empty() {
            let rows = self
                .groups
                .iter()
                .enumerate()
                .map(|(g, (name, members))| {
                    let in_pool = members.iter().any(|&j| self.used[j]);
                    let (m, sd) = if in_pool {
                        summarise(&self.sse_grp[g])
                    } else {
                        (0.0, 0.0)
                    };
                    row(Arc::from(name.as_str()), m, sd, in_pool)
                })
                .collect();
            block("group", "permutation", rows);
        }
        if let (true, Some(kind)) = (self.cfg.wants("native"), self.native_kind) {
            let f = self.native_folds.max(1) as f64;
            let vals: Vec<f64> = self.native_sum.iter().map(|v| v / f).collect();
            let rows = (0..names.len())
                .map(|j| row(names[j].clone(), vals[j], 0.0, self.used[j]))
                .collect();
            block("indicator", kind, rows);
            if !self.groups.is_empty() {
                let rows = self
                    .groups
                    .iter()
                    .map(|(name, members)| {
                        let in_pool = members.iter().any(|&j| self.used[j]);
                        row(
                            Arc::from(name.as_str()),
                            members.iter().map(|&j| vals[j]).sum(),
                            0.0,
                            in_pool,
                        )
                    })
                    .collect();
                block("group", kind, rows);
            }
        }
        out
    }
}
