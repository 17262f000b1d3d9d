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
        let seed = mix(mix(self.seed, spec.stream()), fi as u64);
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
        let model = guarded(|| self.models[si].fit(&input))?;
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

    pub(super) fn run_spec(&self, si: usize, states: &[FoldState]) -> SpecResult {
        let t0 = Instant::now();
        let n_pred: usize = self.folds.folds.iter().map(|f| f.test.len()).sum();
        let mut preds = Vec::with_capacity(n_pred);
        let mut obs = Vec::with_capacity(n_pred);
        let mut base = Vec::with_capacity(n_pred);
        let mut units = Vec::with_capacity(n_pred);
        let mut imp = self.importance.as_ref().map(|cfg| {
            crate::importance::Accumulator::new(self.panel, &self.space.specs[si], cfg, self.seed)
        });
        let mut imp_seconds = 0.0;
        let mut notes: Vec<String> = Vec::new();
        let mut importance_failed = false;
        for (fi, st) in states.iter().enumerate() {
            let fold = &self.folds.folds[fi];
            notes.extend(st.notes.iter().cloned());
            let out = self.fit_fold(si, fi, st).and_then(|(m, back)| {
                let p = guarded(|| Ok(m.predict(st.test.view()).mapv(|z| back.inverse(z))))?;
                match p.iter().position(|v| !v.is_finite()) {
                    Some(k) => Err(FitError::Invalid(format!(
                        "non-finite prediction for row {}",
                        st.test_rows[k] + 1
                    ))),
                    None => Ok((m, back, p)),
                }
            });
            match out {
                Ok((m, back, p)) => {
                    if let Some(acc) = imp.as_mut() {
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
                            imp = None;
                            importance_failed = true;
                            notes.push(format!(
                                "repeat {}, fold {}: importance: {e}; the spec has no importance rows",
                                fold.repeat, fold.index
                            ));
                        }
                        imp_seconds += ti.elapsed().as_secs_f64();
                    }
                    for (k, &row) in st.test_rows.iter().enumerate() {
                        preds.push(Prediction {
                            row: row as u32,
                            repeat: fold.repeat as u16,
                            fold: fold.index as u16,
                            value: p[k],
                        });
                        obs.push(self.panel.y[row]);
                        units.push(self.panel.row_unit[row]);
                        base.push(self.ctx[fi].baseline);
                    }
                }
                Err(e) => {
                    return SpecResult {
                        spec: si,
                        loadings: None,
                        status: e.cause(),
                        message: Some(format!(
                            "model (repeat {}, fold {}): {e}",
                            fold.repeat, fold.index
                        )),
                        notes,
                        importance_failed,
                        scores: None,
                        seconds: t0.elapsed().as_secs_f64(),
                        predictions: Vec::new(),
                        importance: Vec::new(),
                        importance_seconds: 0.0,
                    }
                }
            }
        }
        let values: Vec<f64> = preds.iter().map(|p| p.value).collect();
        SpecResult {
            spec: si,
            loadings: None,
            status: crate::error::Status::Ok,
            message: None,
            notes,
            importance_failed,
            scores: Some(Scores::compute(&obs, &values, &base, &units)),
            seconds: t0.elapsed().as_secs_f64() - imp_seconds,
            predictions: preds,
            importance: imp.map(|a| a.finish()).unwrap_or_default(),
            importance_seconds: imp_seconds,
        }
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
