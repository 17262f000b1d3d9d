//! The sweep: a stage tree over the choice space, run in parallel.
//!
//! The tree: outcome transform -> pool -> fill -> scale -> compress, then the specs
//! (model x weighting) at the leaves. The pool comes first, so no step that reads
//! indicator values sees an indicator outside the spec's pool. Specs sharing a
//! preparation prefix share its fitted stages: per fold, each distinct node is fitted
//! once on the fold's training rows and its output feeds every node and model below it.
//! The tree is walked depth first, so at most one root-to-leaf path of prepared matrices
//! per worker is alive at a time.
//!
//! Invariants (tested in `tests/`):
//! * every fit (stage, weights, baseline, model) sees only the training rows of its fold;
//!   the [`Audit`] hook receives, at the call that fits, the row ids behind the data the
//!   step is handed and the number of data rows handed (`tests/leak.rs`);
//! * a spec's results depend only on the panel, the fold plan, the run seed and the spec
//!   (its random stream is keyed by the spec id), never on threads or scheduling;
//! * a failure inside one spec (or one stage) is recorded, and the sweep goes on;
//! * what a spec's fits did that changes what its numbers mean, without failing it (an
//!   indicator dropped in a fold, an iteration limit reached, importances that could not
//!   be computed), is recorded in [`SpecResult::notes`]: one place, written to the `notes`
//!   column of `specs`.

use crate::error::{Error, FitError, Result};
use crate::folds::FoldPlan;
use crate::metrics::Scores;
use crate::models::{FitInput, Predictor, Regressor};
use crate::panel::Panel;
use crate::space::{ChoiceSpace, Dim, Spec};
use crate::stages::{Fitted, Stage, StageInput};
use crate::streams::mix;
use crate::transform::Target;
use ndarray::{Array1, Array2, Axis};
use rayon::prelude::*;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::Arc;
use std::time::Instant;

pub mod cache;
pub mod importance;
mod nest;
mod spec;

pub use nest::{model_stream, nested_costs};

/// Receives the row ids every fitted step is handed (for leak-freedom tests and audits).
pub trait Audit: Send + Sync {
    /// `step` names the fitted thing (`pool`, `fill`, `scale`, `compress`, `weights`,
    /// `baseline`, `model`); `fold` indexes [`FoldPlan::folds`]. `rows` are the panel row
    /// ids behind the data the step is handed (a stage's [`StageInput::rows`], the rows
    /// the model's, the weights' and the baseline's inputs were selected by), and
    /// `data_rows` the largest length among the data it is handed (matrix rows, outcomes,
    /// weights, units, standard errors): the two must agree, or the step saw rows it was
    /// not told about. The call is made where the step is fitted, with its actual input.
    fn fitted(&self, step: &str, fold: usize, rows: &[usize], data_rows: usize);
}

/// One out-of-fold prediction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Prediction {
    pub row: u32,
    pub repeat: u16,
    pub fold: u16,
    pub value: f64,
}

/// Outcome of one spec.
#[derive(Debug, Clone)]
pub struct SpecResult {
    /// Index into [`ChoiceSpace::specs`].
    pub spec: usize,
    /// Loadings of the spec's compression fitted on all rows (descriptive only: they never
    /// feed a prediction); `None` without compression.
    pub loadings: Option<Arc<Loadings>>,
    /// `ok` or the failure cause (`singular`, `invalid`, `no_convergence`, `panic`).
    pub status: crate::error::Status,
    pub message: Option<String>,
    /// Notes on an ok (or failed) spec, in fold order, each naming its repeat, fold and
    /// step (`repeat 0, fold 2: fill `median`: ...`); written `; `-joined to the `notes`
    /// column of `specs` (null when empty).
    pub notes: Vec<String>,
    /// True when importances were asked for but could not be computed (a note says why).
    pub importance_failed: bool,
    pub scores: Option<Scores>,
    /// Wall seconds spent fitting and predicting this spec's models (stages excluded).
    pub seconds: f64,
    pub predictions: Vec<Prediction>,
    /// Importance rows (empty when importances are off or the spec failed).
    pub importance: Vec<crate::importance::ImportanceRow>,
    /// Wall seconds spent on importances.
    pub importance_seconds: f64,
}

/// A fold's fitted model and its back-transform.
type FoldFit = (Box<dyn Predictor>, Arc<dyn Target>);

pub use crate::stages::predict_chain;

/// Components x indicators loadings of a compression.
#[derive(Debug, Clone)]
pub struct Loadings {
    pub components: Vec<String>,
    pub indicators: Vec<String>,
    pub values: Array2<f64>,
}

/// The all-rows state carried beside the fold states, for descriptive outputs.
struct Whole {
    x: Array2<f64>,
    names: Vec<String>,
    y: Array1<f64>,
}

/// A fitted spec for one fold: the stage chain and the model. Predicts raw indicator rows.
pub struct FittedSpec {
    pub chain: Vec<Arc<dyn Fitted>>,
    pub model: Box<dyn Predictor>,
    /// Back-transform of the model's predictions to the outcome's scale (with the fold's
    /// training residuals under `smear = 1`).
    pub target: Arc<dyn Target>,
    /// Notes of the fold's stage fits (as in [`SpecResult::notes`]).
    pub notes: Vec<String>,
}

impl FittedSpec {
    /// Predict rows of raw indicators (panel columns, NaN for gaps).
    pub fn predict_raw(&self, x: ndarray::ArrayView2<f64>) -> Array1<f64> {
        predict_chain(
            &self.chain,
            self.model.as_ref(),
            self.target.as_ref(),
            x,
            None,
        )
    }
    /// The same for panel rows (their ids let unit-aware stages use the unit's waves).
    pub fn predict_rows(&self, x: ndarray::ArrayView2<f64>, rows: &[usize]) -> Array1<f64> {
        predict_chain(
            &self.chain,
            self.model.as_ref(),
            self.target.as_ref(),
            x,
            Some(rows),
        )
    }
}

struct Node {
    label: String,
    level: usize,
    stage: Arc<dyn Stage>,
    children: Vec<Node>,
    /// Specs whose path ends here (only at the last stage level).
    specs: Vec<usize>,
}

impl Node {
    fn all_specs(&self, out: &mut Vec<usize>) {
        out.extend(&self.specs);
        for c in &self.children {
            c.all_specs(out);
        }
    }
}

/// The top of the stage tree: one outcome transform and the stages below it.
struct TargetNode {
    label: String,
    target: Arc<dyn Target>,
    children: Vec<Node>,
}

/// Per-fold data at a node.
struct FoldState {
    /// Panel row ids of the rows of `train` and `test`, in their order.
    train_rows: Arc<Vec<usize>>,
    test_rows: Arc<Vec<usize>>,
    train: Array2<f64>,
    test: Array2<f64>,
    names: Vec<String>,
    chain: Vec<Arc<dyn Fitted>>,
    /// Training outcome under the node's transform.
    y: Arc<Array1<f64>>,
    target: Arc<dyn Target>,
    /// The fold's pooled and filled permutation draws, shared by the specs below one fill
    /// node (which also share its pool).
    draws: Option<Arc<crate::importance::Draws>>,
    /// Notes of the stages fitted so far on this fold.
    notes: Vec<String>,
}

/// Per-fold context shared by every spec: the training rows' outcome, units and standard
/// errors, all selected by `rows`.
struct FoldCtx {
    /// Panel row ids of the training rows.
    rows: Vec<usize>,
    /// Training outcome on its own scale.
    y_train: Array1<f64>,
    train_units: Vec<usize>,
    /// Standard errors of the training rows, when declared.
    train_se: Option<Vec<f64>>,
    /// The training outcomes' median ([`crate::metrics::baseline`]).
    baseline: f64,
}

/// The sweep over one panel.
pub struct Sweep<'a> {
    pub panel: &'a Panel,
    pub space: &'a ChoiceSpace,
    pub folds: &'a FoldPlan,
    pub seed: u64,
    pub audit: Option<Arc<dyn Audit>>,
    /// Also fit each compression on all rows and report its loadings (default true).
    pub describe: bool,
    /// Importances to compute per spec (none by default; `run` sets the config's).
    pub importance: Option<crate::importance::ImportanceSection>,
    /// Bytes of filled permutation draws kept under one fill and shared by the specs below
    /// it (default [`crate::importance::DRAWS_BUDGET`]; 0 shares nothing). The results
    /// are the same whatever the budget; it only saves work.
    pub draws_budget: usize,
    /// Fits of stages that do not read the outcome, shared with other sweeps of the same
    /// indicators, folds and space (the null's draws); `None` (default) shares nothing.
    pub stage_cache: Option<Arc<cache::StageCache>>,
    roots: Vec<TargetNode>,
    models: Vec<Arc<dyn Regressor>>,
    ctx: Vec<FoldCtx>,
    /// Nanoseconds spent fitting and applying stages (summed over threads).
    stage_nanos: std::sync::atomic::AtomicU64,
    /// Nanoseconds spent filling shared permutation draws (inside importance seconds).
    draw_nanos: Arc<std::sync::atomic::AtomicU64>,
}

fn panic_text(p: Box<dyn std::any::Any + Send>) -> String {
    if let Some(s) = p.downcast_ref::<&str>() {
        s.to_string()
    } else if let Some(s) = p.downcast_ref::<String>() {
        s.clone()
    } else {
        "unknown panic".into()
    }
}

fn guarded<T>(
    f: impl FnOnce() -> std::result::Result<T, FitError>,
) -> std::result::Result<T, FitError> {
    match catch_unwind(AssertUnwindSafe(f)) {
        Ok(r) => r,
        Err(p) => Err(FitError::Panic(panic_text(p))),
    }
}

impl<'a> Sweep<'a> {
    /// Build the stage tree for `subset` of the space's specs (all when `None`).
    pub fn new(
        panel: &'a Panel,
        space: &'a ChoiceSpace,
        folds: &'a FoldPlan,
        seed: u64,
        subset: Option<&[usize]>,
    ) -> Result<Sweep<'a>> {
        let all: Vec<usize> = (0..space.specs.len()).collect();
        let chosen = subset.unwrap_or(&all);
        let mut roots: Vec<TargetNode> = Vec::new();
        for &si in chosen {
            let spec = &space.specs[si];
            let tc = spec.choice(crate::decl::Dim::Transform);
            // Specs differing only in the back-transform share the fitted scale's tree.
            let tlabel = crate::transform::fit_key(tc);
            let ti = match roots.iter().position(|r| r.label == tlabel) {
                Some(i) => i,
                None => {
                    let target =
                        crate::transform::build(tc, panel.outcome_scale).map_err(Error::Space)?;
                    roots.push(TargetNode {
                        label: tlabel,
                        target,
                        children: Vec::new(),
                    });
                    roots.len() - 1
                }
            };
            let mut level_nodes = &mut roots[ti].children;
            for (level, dim) in Dim::STAGES.into_iter().enumerate() {
                let choice = spec.choice(dim);
                let label = choice.canonical();
                let pos = match level_nodes.iter().position(|n| n.label == label) {
                    Some(p) => p,
                    None => {
                        let stage = crate::stages::build(choice, panel).map_err(Error::Space)?;
                        level_nodes.push(Node {
                            label,
                            level,
                            stage,
                            children: Vec::new(),
                            specs: Vec::new(),
                        });
                        level_nodes.len() - 1
                    }
                };
                if level + 1 == Dim::STAGES.len() {
                    level_nodes[pos].specs.push(si);
                    break;
                }
                level_nodes = &mut level_nodes[pos].children;
            }
        }
        let models = space
            .specs
            .iter()
            .map(|s| crate::models::build(s.choice(crate::decl::Dim::Model)).map_err(Error::Space))
            .collect::<Result<Vec<_>>>()?;
        let ctx = folds
            .folds
            .iter()
            .map(|f| {
                let rows = f.train.clone();
                let y_train: Array1<f64> = rows.iter().map(|&i| panel.y[i]).collect();
                let baseline = crate::metrics::baseline(y_train.as_slice().unwrap_or(&[]));
                FoldCtx {
                    train_se: panel
                        .se
                        .as_ref()
                        .map(|se| rows.iter().map(|&i| se[i]).collect()),
                    y_train,
                    train_units: rows.iter().map(|&i| panel.row_unit[i]).collect(),
                    baseline,
                    rows,
                }
            })
            .collect();
        Ok(Sweep {
            panel,
            space,
            folds,
            seed,
            audit: None,
            describe: true,
            draws_budget: crate::importance::DRAWS_BUDGET,
            importance: None,
            stage_cache: None,
            roots,
            models,
            ctx,
            stage_nanos: std::sync::atomic::AtomicU64::new(0),
            draw_nanos: Arc::new(std::sync::atomic::AtomicU64::new(0)),
        })
    }

    pub fn with_audit(mut self, audit: Arc<dyn Audit>) -> Self {
        self.audit = Some(audit);
        self
    }

    fn audit(&self, step: &str, fold: usize, rows: &[usize], data_rows: usize) {
        if let Some(a) = &self.audit {
            a.fitted(step, fold, rows, data_rows);
        }
    }

    /// Fit a stage on its input, reporting to the audit exactly what it is handed.
    fn fit_stage(
        &self,
        step: Dim,
        fold: usize,
        stage: &dyn Stage,
        input: &StageInput,
    ) -> std::result::Result<Arc<dyn Fitted>, FitError> {
        self.audit(
            step.name(),
            fold,
            input.rows,
            input.x.nrows().max(input.y.len()),
        );
        guarded(|| stage.fit(input))
    }

    /// CPU seconds spent filling the permutation draws shared under each fill (part of
    /// the specs' importance seconds: the spec that asks first fills a draw).
    pub fn shared_draw_seconds(&self) -> f64 {
        self.draw_nanos.load(std::sync::atomic::Ordering::Relaxed) as f64 * 1e-9
    }

    /// Preparations at the fill stage (one per transform, pool and fill), where
    /// permutation draws are shared.
    pub fn n_fill_nodes(&self) -> usize {
        self.roots
            .iter()
            .flat_map(|r| &r.children)
            .map(|pool| pool.children.len())
            .sum()
    }

    /// Seconds spent fitting and applying stages so far, summed over threads (the
    /// descriptive all-rows fits for loadings included).
    pub fn stage_seconds(&self) -> f64 {
        self.stage_nanos.load(std::sync::atomic::Ordering::Relaxed) as f64 * 1e-9
    }

    fn add_stage_time(&self, t0: std::time::Instant) {
        let ns = u64::try_from(t0.elapsed().as_nanos()).unwrap_or(u64::MAX);
        self.stage_nanos
            .fetch_add(ns, std::sync::atomic::Ordering::Relaxed);
    }

    /// Distinct fitted preparations per fold (the number of stage fits is this x folds).
    pub fn n_stage_nodes(&self) -> usize {
        fn count(n: &[Node]) -> usize {
            n.iter().map(|c| 1 + count(&c.children)).sum()
        }
        self.roots.iter().map(|r| count(&r.children)).sum()
    }

    /// Run every spec; each result is handed to `emit` as soon as it is ready (from any
    /// worker thread). Runs on the current rayon pool.
    pub fn run(&self, emit: &(dyn Fn(SpecResult) + Sync)) {
        for (fi, ctx) in self.ctx.iter().enumerate() {
            // The baseline (the training mean) was computed from `y_train`.
            self.audit("baseline", fi, &ctx.rows, ctx.y_train.len());
        }
        self.roots.par_iter().for_each(|root| {
            let base: Vec<FoldState> = (0..self.folds.folds.len())
                .map(|fi| self.base_state(fi, &root.target))
                .collect();
            let whole = self.describe.then(|| Whole {
                x: self.panel.x.clone(),
                names: self.panel.indicators.clone(),
                y: self.panel.y.mapv(|v| root.target.forward(v)),
            });
            root.children
                .par_iter()
                .for_each(|n| self.run_node(n, &base, whole.as_ref(), emit, "", true));
        });
    }

    /// Raw indicator rows of a fold and its training outcome under `target`.
    fn base_state(&self, fi: usize, target: &Arc<dyn Target>) -> FoldState {
        let f = &self.folds.folds[fi];
        let ctx = &self.ctx[fi];
        FoldState {
            train: self.panel.x.select(Axis(0), &ctx.rows),
            test: self.panel.x.select(Axis(0), &f.test),
            train_rows: Arc::new(ctx.rows.clone()),
            test_rows: Arc::new(f.test.clone()),
            names: self.panel.indicators.clone(),
            chain: Vec::new(),
            y: Arc::new(ctx.y_train.mapv(|v| target.forward(v))),
            target: target.clone(),
            draws: None,
            notes: Vec::new(),
        }
    }

    /// Fit a node's stage on all rows (for loadings); `None` when it fails.
    fn describe(&self, node: &Node, whole: Option<&Whole>) -> Option<Whole> {
        let w = whole?;
        let all: Vec<usize> = (0..self.panel.n_rows()).collect();
        let input = StageInput {
            x: w.x.view(),
            y: w.y.view(),
            rows: &all,
            names: &w.names,
        };
        let f = guarded(|| node.stage.fit(&input)).ok()?;
        let x = guarded(|| Ok(f.apply_rows(w.x.view(), Some(&all)))).ok()?;
        let names = f.names().to_vec();
        if node.level + 1 == Dim::STAGES.len() {
            // At the last stage only the loadings are kept: x holds them, names the inputs.
            let (l, ind) = f.loadings()?;
            return Some(Whole {
                x: l.clone(),
                names: ind.to_vec(),
                y: Array1::zeros(0),
            });
        }
        Some(Whole {
            x,
            names,
            y: w.y.clone(),
        })
    }

    /// Run `node` and everything below it. `path` names the node's parent in the tree
    /// (the stage cache's key) and `shared` says whether every stage above reads the
    /// indicators only (then this node's fit may come from [`Sweep::stage_cache`]).
    fn run_node(
        &self,
        node: &Node,
        parent: &[FoldState],
        whole: Option<&Whole>,
        emit: &(dyn Fn(SpecResult) + Sync),
        path: &str,
        shared: bool,
    ) {
        let step = Dim::STAGES[node.level];
        let path = format!("{path}\u{1f}{}", node.label);
        let shared = shared && !node.stage.reads_outcome();
        let cache = self.stage_cache.as_deref().filter(|_| shared);
        let permutes = self
            .importance
            .as_ref()
            .is_some_and(|c| c.wants("permutation") || c.wants("group"));
        // Filled permutation draws are kept at the fill: below it every spec shares the
        // same fitted pool and fill, so a draw's filled rows are the same for all of them
        // (above it, specs under one pool have different fills).
        let budget = (step == Dim::Fill && self.draws_budget > 0 && permutes)
            .then(|| crate::importance::draws_budget(self.draws_budget));
        let states: std::result::Result<Vec<FoldState>, (usize, FitError)> = parent
            .par_iter()
            .enumerate()
            .map(|(fi, p)| {
                let input = StageInput {
                    x: p.train.view(),
                    y: p.y.view(),
                    rows: &p.train_rows,
                    names: &p.names,
                };
                let (fitted, train, test) = match cache.and_then(|c| c.get(&path, fi)) {
                    Some(hit) => (hit.fitted.clone(), hit.train.clone(), hit.test.clone()),
                    None => {
                        let t0 = std::time::Instant::now();
                        let fitted = self
                            .fit_stage(step, fi, node.stage.as_ref(), &input)
                            .map_err(|e| (fi, e))?;
                        let (train, test) = guarded(|| {
                            Ok((
                                fitted.apply_rows(p.train.view(), Some(&p.train_rows)),
                                fitted.apply_rows(p.test.view(), Some(&p.test_rows)),
                            ))
                        })
                        .map_err(|e| (fi, e))?;
                        self.add_stage_time(t0);
                        if let Some(c) = cache {
                            c.put(
                                &path,
                                fi,
                                cache::Entry {
                                    fitted: fitted.clone(),
                                    train: train.clone(),
                                    test: test.clone(),
                                },
                            );
                        }
                        (fitted, train, test)
                    }
                };
                let fold = &self.folds.folds[fi];
                let mut notes = p.notes.clone();
                notes.extend(fitted.notes().into_iter().map(|n| {
                    format!(
                        "repeat {}, fold {}: {step} `{}`: {n}",
                        fold.repeat, fold.index, node.label
                    )
                }));
                let mut chain = p.chain.clone();
                let names = fitted.names().to_vec();
                chain.push(fitted);
                let draws = match &budget {
                    Some(b) => Some(Arc::new(crate::importance::Draws::new(
                        chain.len(),
                        test.nrows(),
                        test.ncols(),
                        b.clone(),
                        self.draw_nanos.clone(),
                    ))),
                    None => p.draws.clone(),
                };
                Ok(FoldState {
                    train_rows: p.train_rows.clone(),
                    test_rows: p.test_rows.clone(),
                    train,
                    test,
                    names,
                    chain,
                    y: p.y.clone(),
                    target: p.target.clone(),
                    draws,
                    notes,
                })
            })
            .collect();
        let states = match states {
            Ok(s) => s,
            Err((fi, e)) => {
                let mut specs = Vec::new();
                node.all_specs(&mut specs);
                let f = &self.folds.folds[fi];
                let msg = format!(
                    "{step} `{}` (repeat {}, fold {}): {e}",
                    node.label, f.repeat, f.index
                );
                for si in specs {
                    emit(SpecResult {
                        spec: si,
                        loadings: None,
                        status: e.cause(),
                        message: Some(msg.clone()),
                        notes: Vec::new(),
                        importance_failed: false,
                        scores: None,
                        seconds: 0.0,
                        predictions: Vec::new(),
                        importance: Vec::new(),
                        importance_seconds: 0.0,
                    });
                }
                return;
            }
        };
        let t0 = std::time::Instant::now();
        let next = self.describe(node, whole);
        self.add_stage_time(t0);
        node.children
            .par_iter()
            .for_each(|c| self.run_node(c, &states, next.as_ref(), emit, &path, shared));
        let loadings = next
            .filter(|_| node.level + 1 == Dim::STAGES.len())
            .map(|w| {
                let components = (1..=w.x.nrows())
                    .map(|c| format!("{}{c}", node.label.split('(').next().unwrap_or("c")))
                    .collect();
                Arc::new(Loadings {
                    components,
                    indicators: w.names,
                    values: w.x,
                })
            });
        self.nest_groups(&node.specs).par_iter().for_each(|g| {
            for mut r in self.run_group(g, &states) {
                r.loadings = loadings.clone();
                emit(r)
            }
        });
    }
}
