//! The spec level of the sweep: a spec's model fitted on a fold's prepared rows, its
//! results (predictions, metrics, importances, notes) over every fold, and `fit_spec`,
//! a spec fitted on any fold as one [`FittedSpec`] that predicts raw indicator rows.

use super::*;

impl<'a> Sweep<'a> {
    /// Fit a spec's model on a fold's prepared training rows; with it, the fold's
    /// back-transform (the plain inverse, or Duan's smearing estimate over the model's
    /// in-sample residuals on these training rows under `smear = 1`).
    pub(super) fn fit_fold(
        &self,
        si: usize,
        fi: usize,
        st: &FoldState,
    ) -> std::result::Result<FoldFit, FitError> {
        let model = self.with_fit_input(si, fi, st, |input| self.models[si].fit(input))?;
        self.back_transform(si, fi, st, model)
    }

    /// Run `fit` (guarded) on spec `si`'s fit input for a fold: its weights and its seed
    /// (from the run seed, [`nest::model_stream`] and the fold), each audited.
    pub(super) fn with_fit_input<T>(
        &self,
        si: usize,
        fi: usize,
        st: &FoldState,
        fit: impl FnOnce(&FitInput) -> std::result::Result<T, FitError>,
    ) -> std::result::Result<T, FitError> {
        let spec: &Spec = &self.space.specs[si];
        let ctx = &self.ctx[fi];
        let winput = crate::weights::WeightInput {
            units: &ctx.train_units,
            y: ctx.y_train.as_slice().unwrap_or(&[]),
            se: ctx.train_se.as_deref(),
            target: Some(st.target.as_ref()),
        };
        self.audit(
            "weights",
            fi,
            &ctx.rows,
            winput
                .units
                .len()
                .max(winput.y.len())
                .max(winput.se.map_or(0, |s| s.len())),
        );
        let w = crate::weights::weights(spec.choice(crate::decl::Dim::Weighting), &winput)
            .map_err(FitError::Invalid)?;
        let stream = nest::model_stream(spec, self.models[si].as_ref());
        let seed = mix(mix(self.seed, stream), fi as u64);
        let input = FitInput {
            x: st.train.view(),
            y: st.y.view(),
            w: w.view(),
            seed,
        };
        self.audit(
            "model",
            fi,
            &st.train_rows,
            input.x.nrows().max(input.y.len()).max(input.w.len()),
        );
        guarded(|| fit(&input))
    }

    /// A fitted model of spec `si` with the fold's back-transform (see [`Sweep::fit_fold`]).
    pub(super) fn back_transform(
        &self,
        si: usize,
        fi: usize,
        st: &FoldState,
        model: Box<dyn Predictor>,
    ) -> std::result::Result<FoldFit, FitError> {
        let spec: &Spec = &self.space.specs[si];
        if !crate::transform::smears(spec.choice(crate::decl::Dim::Transform)) {
            return Ok((model, st.target.clone()));
        }
        let fitted = guarded(|| Ok(model.predict(st.train.view())))?;
        let residuals: Vec<f64> = st.y.iter().zip(fitted.iter()).map(|(z, f)| z - f).collect();
        if let Some(k) = residuals.iter().position(|e| !e.is_finite()) {
            return Err(FitError::Invalid(format!(
                "smearing: non-finite training residual for row {}",
                self.folds.folds[fi].train[k] + 1
            )));
        }
        let smeared: Arc<dyn Target> = Arc::new(crate::transform::Smeared {
            inner: st.target.clone(),
            residuals,
        });
        Ok((model, smeared))
    }

    /// Run a group of specs over every fold (one spec, or the specs of a path fitted
    /// once per fold: [`Sweep::nest_groups`]); their results in the group's order.
    pub(super) fn run_group(&self, group: &[usize], states: &[FoldState]) -> Vec<SpecResult> {
        let mut runs: Vec<SpecRun> = group.iter().map(|&si| SpecRun::new(self, si)).collect();
        for (fi, st) in states.iter().enumerate() {
            let live: Vec<usize> = (0..group.len())
                .filter(|&j| runs[j].failed.is_none())
                .collect();
            if live.is_empty() {
                break;
            }
            let members: Vec<usize> = live.iter().map(|&j| group[j]).collect();
            let t0 = Instant::now();
            let fits = self.fit_group(&members, fi, st);
            let fit_seconds = t0.elapsed().as_secs_f64();
            let shares =
                self.path_shares(&members, st.train.nrows() as f64, st.train.ncols() as f64);
            for ((&j, fit), share) in live.iter().zip(fits).zip(shares) {
                runs[j].seconds += fit_seconds * share;
                runs[j].add_fold(self, fi, st, fit);
            }
        }
        runs.into_iter().map(SpecRun::finish).collect()
    }
    /// Fit one spec on one fold and return the reusable fitted pipeline.
    pub fn fit_spec(&self, si: usize, fi: usize) -> std::result::Result<FittedSpec, FitError> {
        let spec = &self.space.specs[si];
        let fold = &self.folds.folds[fi];
        let target = crate::transform::build(
            spec.choice(crate::decl::Dim::Transform),
            self.panel.outcome_scale,
        )
        .map_err(FitError::Invalid)?;
        let mut st = self.base_state(fi, &target);
        for dim in Dim::STAGES {
            let stage =
                crate::stages::build(spec.choice(dim), self.panel).map_err(FitError::Invalid)?;
            let input = StageInput {
                x: st.train.view(),
                y: st.y.view(),
                rows: &st.train_rows,
                names: &st.names,
            };
            let f = self.fit_stage(dim, fi, stage.as_ref(), &input)?;
            st.notes.extend(f.notes().into_iter().map(|n| {
                format!(
                    "repeat {}, fold {}: {dim} `{}`: {n}",
                    fold.repeat,
                    fold.index,
                    spec.choice(dim).canonical()
                )
            }));
            st.train = f.apply_rows(st.train.view(), Some(&st.train_rows));
            st.test = f.apply_rows(st.test.view(), Some(&st.test_rows));
            st.names = f.names().to_vec();
            st.chain.push(f);
        }
        let (model, back) = self.fit_fold(si, fi, &st)?;
        Ok(FittedSpec {
            chain: st.chain,
            model,
            target: back,
            notes: st.notes,
        })
    }
}

/// One spec's results as its folds come in.
pub(super) struct SpecRun<'s> {
    si: usize,
    preds: Vec<Prediction>,
    obs: Vec<f64>,
    base: Vec<f64>,
    units: Vec<usize>,
    imp: Option<crate::importance::Accumulator<'s>>,
    imp_seconds: f64,
    notes: Vec<String>,
    importance_failed: bool,
    /// Seconds of model fits and predictions (the spec's share of a shared fit).
    seconds: f64,
    /// Set at the first fold whose model failed; the spec's later folds are skipped.
    failed: Option<(FitError, String)>,
}

impl<'s> SpecRun<'s> {
    fn new(sweep: &'s Sweep<'_>, si: usize) -> SpecRun<'s> {
        let n_pred: usize = sweep.folds.folds.iter().map(|f| f.test.len()).sum();
        SpecRun {
            si,
            preds: Vec::with_capacity(n_pred),
            obs: Vec::with_capacity(n_pred),
            base: Vec::with_capacity(n_pred),
            units: Vec::with_capacity(n_pred),
            imp: sweep.importance.as_ref().map(|cfg| {
                crate::importance::Accumulator::new(
                    sweep.panel,
                    &sweep.space.specs[si],
                    cfg,
                    sweep.seed,
                )
            }),
            imp_seconds: 0.0,
            notes: Vec::new(),
            importance_failed: false,
            seconds: 0.0,
            failed: None,
        }
    }

    /// Predict a fold's test rows with its fitted model (or record why it failed), and
    /// add the fold's importances.
    fn add_fold(
        &mut self,
        sweep: &Sweep<'_>,
        fi: usize,
        st: &FoldState,
        fit: std::result::Result<FoldFit, FitError>,
    ) {
        let t0 = Instant::now();
        let fold = &sweep.folds.folds[fi];
        self.notes.extend(st.notes.iter().cloned());
        let out = fit.and_then(|(m, back)| {
            let p = guarded(|| Ok(m.predict(st.test.view()).mapv(|z| back.inverse(z))))?;
            match p.iter().position(|v| !v.is_finite()) {
                Some(k) => Err(FitError::Invalid(format!(
                    "non-finite prediction for row {}",
                    st.test_rows[k] + 1
                ))),
                None => Ok((m, back, p)),
            }
        });
        let (m, back, p) = match out {
            Ok(v) => v,
            Err(e) => {
                let msg = format!("model (repeat {}, fold {}): {e}", fold.repeat, fold.index);
                self.failed = Some((e, msg));
                self.seconds += t0.elapsed().as_secs_f64();
                return;
            }
        };
        if let Some(acc) = self.imp.as_mut() {
            let ti = Instant::now();
            let r = guarded(|| {
                acc.add_fold(
                    fi,
                    &st.chain,
                    st.draws.as_deref(),
                    m.as_ref(),
                    back.as_ref(),
                    &st.names,
                    st.train.view(),
                    &st.test_rows,
                    &p,
                )
                .map_err(FitError::Invalid)
            });
            if let Err(e) = r {
                let e = match e {
                    FitError::Invalid(m) => m,
                    other => other.to_string(),
                };
                self.imp = None;
                self.importance_failed = true;
                self.notes.push(format!(
                    "repeat {}, fold {}: importance: {e}; the spec has no importance rows",
                    fold.repeat, fold.index
                ));
            }
            self.imp_seconds += ti.elapsed().as_secs_f64();
        }
        for (k, &row) in st.test_rows.iter().enumerate() {
            self.preds.push(Prediction {
                row: row as u32,
                repeat: fold.repeat as u16,
                fold: fold.index as u16,
                value: p[k],
            });
            self.obs.push(sweep.panel.y[row]);
            self.units.push(sweep.panel.row_unit[row]);
            self.base.push(sweep.ctx[fi].baseline);
        }
        self.seconds += t0.elapsed().as_secs_f64();
    }

    fn finish(self) -> SpecResult {
        let seconds = (self.seconds - self.imp_seconds).max(0.0);
        if let Some((e, msg)) = self.failed {
            return SpecResult {
                spec: self.si,
                loadings: None,
                status: e.cause(),
                message: Some(msg),
                notes: self.notes,
                importance_failed: self.importance_failed,
                scores: None,
                seconds,
                predictions: Vec::new(),
                importance: Vec::new(),
                importance_seconds: 0.0,
            };
        }
        let values: Vec<f64> = self.preds.iter().map(|p| p.value).collect();
        SpecResult {
            spec: self.si,
            loadings: None,
            status: crate::error::Status::Ok,
            message: None,
            notes: self.notes,
            importance_failed: self.importance_failed,
            scores: Some(Scores::compute(&self.obs, &values, &self.base, &self.units)),
            seconds,
            predictions: self.preds,
            importance: self.imp.map(|a| a.finish()).unwrap_or_default(),
            importance_seconds: self.imp_seconds,
        }
    }
}
