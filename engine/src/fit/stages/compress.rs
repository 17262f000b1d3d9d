//! Compression of the pooled, scaled indicators into fewer columns, fitted in-fold.
//!
//! PCA: centre on the training mean, take the eigenvectors of the training covariance
//! (or, when there are fewer rows than columns, of the Gram matrix, mapped back), keep the
//! k largest. The symmetric eigensolver is linfa-linalg's (pure Rust). linfa-reduction's
//! `Pca` is not used: its truncated SVD is iterative with a random start, and in 0.8 its
//! `explained_variance` divides by the number of components instead of n - 1.
//! Each component's sign is fixed so its largest-magnitude loading is positive, which
//! makes components (and so results) reproducible.

use super::{Fitted, Stage, StageInput, StageOption};
use crate::decl::{Excludes, OptionDecl, ParamDecl, ParamKind, Registered};
use crate::error::FitError;
use linfa_linalg::eigh::{EigSort, Eigh};
use ndarray::{Array1, Array2, ArrayView2, Axis};
use std::sync::Arc;

pub const OPTIONS: &[StageOption] = &[
    Registered {
        decl: OptionDecl {
            name: "none",
            params: &[],
            help: "use the pooled indicators as they are",
            weighted: true,
            excludes: &[],
        },
        build: |_, _| Ok(Arc::new(Identity)),
    },
    Registered {
        decl: OptionDecl {
            name: "pca",
            params: &[ParamDecl {
                name: "k",
                kind: ParamKind::Int {
                    min: 1,
                    max: 10_000,
                },
                default: 5.0,
                help: "number of principal components kept",
            }],
            help: "principal components of the training rows",
            weighted: true,
            excludes: &[],
        },
        build: |c, _| {
            Ok(Arc::new(Pca {
                k: c.param("k").ok_or("pca needs k")? as usize,
            }))
        },
    },
    Registered {
        decl: OptionDecl {
            name: "nmf",
            params: &[
                ParamDecl {
                    name: "k",
                    kind: ParamKind::Int {
                        min: 1,
                        max: 10_000,
                    },
                    default: 5.0,
                    help: "number of non-negative components",
                },
                ParamDecl {
                    name: "max_iter",
                    kind: ParamKind::Int {
                        min: 1,
                        max: 1_000_000,
                    },
                    default: 500.0,
                    help: "most HALS sweeps",
                },
                ParamDecl {
                    name: "tol",
                    kind: ParamKind::Real {
                        min: 0.0,
                        max: 1.0,
                        open_min: false,
                    },
                    default: 1e-6,
                    help: "stop when the objective falls by less than this share",
                },
            ],
            help: "non-negative matrix factorisation (needs scale minmax or non-negative data)",
            weighted: true,
            excludes: &[Excludes {
                dim: crate::decl::Dim::Scale,
                options: &["standardise"],
                why: "NMF needs non-negative input",
            }],
        },
        build: |c, _| {
            Ok(Arc::new(Nmf {
                k: c.param("k").ok_or("nmf needs k")? as usize,
                max_iter: c.param("max_iter").ok_or("nmf needs max_iter")? as usize,
                tol: c.param("tol").ok_or("nmf needs tol")?,
            }))
        },
    },
    Registered {
        decl: OptionDecl {
            name: "pls",
            params: &[crate::models::pls::K],
            help: "PLS components, supervised by the training outcome",
            weighted: true,
            excludes: &[],
        },
        build: |c, _| {
            Ok(Arc::new(PlsStage {
                k: c.param("k").ok_or("pls needs k")? as usize,
            }))
        },
    },
];

/// PLS components as a compression: supervised by the (transformed) training outcome.
pub struct PlsStage {
    pub k: usize,
}

pub struct PlsStageFitted {
    fit: crate::models::pls::PlsFit,
    rotations: Array2<f64>,
    input_names: Vec<String>,
    names: Vec<String>,
}

impl Stage for PlsStage {
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        let fit = crate::models::pls::PlsParams { k: self.k }.fit_pls(input.x, input.y)?;
        let rotations = fit.rotations();
        Ok(Arc::new(PlsStageFitted {
            fit,
            rotations,
            input_names: input.names.to_vec(),
            names: (1..=self.k).map(|c| format!("pls{c}")).collect(),
        }))
    }
}

impl Fitted for PlsStageFitted {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        self.fit.scores(x)
    }
    fn names(&self) -> &[String] {
        &self.names
    }
    fn loadings(&self) -> Option<(&Array2<f64>, &[String])> {
        Some((&self.rotations, &self.input_names))
    }
}

/// Validated NMF parameters.
pub struct Nmf {
    pub k: usize,
    pub max_iter: usize,
    pub tol: f64,
}

/// A fitted NMF: rows are projected onto `h` by non-negative least squares.
pub struct NmfFitted {
    pub h: Array2<f64>,
    pub input_names: Vec<String>,
    names: Vec<String>,
    /// Set when the fit stopped at its iteration limit.
    notes: Vec<String>,
}

impl Stage for Nmf {
    fn reads_outcome(&self) -> bool {
        false
    }
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        let (n, p) = input.x.dim();
        if self.k > p || self.k > n {
            return Err(FitError::Invalid(format!(
                "nmf k={} but the training rows have {n} rows and {p} columns",
                self.k
            )));
        }
        let f = super::nmf::fit(input.x, self.k, self.max_iter, self.tol)?;
        let notes = if f.converged {
            Vec::new()
        } else {
            let n = f.objective.len();
            let last = (f.objective[n - 1] - f.objective[n.saturating_sub(2)]).abs()
                / f.objective[n.saturating_sub(2)].max(1e-300);
            vec![format!(
                "stopped at its iteration limit (max_iter = {}) with the objective still falling by {last:.1e} relative per sweep (tol = {})",
                self.max_iter, self.tol
            )]
        };
        Ok(Arc::new(NmfFitted {
            h: f.h,
            input_names: input.names.to_vec(),
            names: (1..=self.k).map(|c| format!("nmf{c}")).collect(),
            notes,
        }))
    }
}

impl Fitted for NmfFitted {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        super::nmf::project(x, &self.h)
    }
    fn names(&self) -> &[String] {
        &self.names
    }
    fn loadings(&self) -> Option<(&Array2<f64>, &[String])> {
        Some((&self.h, &self.input_names))
    }
    fn notes(&self) -> Vec<String> {
        self.notes.clone()
    }
}

struct Identity;
struct IdentityFitted {
    names: Vec<String>,
}

/// Validated PCA parameters.
pub struct Pca {
    pub k: usize,
}

/// A fitted PCA: `scores = (x - mean) * components^T`.
pub struct PcaFitted {
    pub mean: Array1<f64>,
    /// k x p, rows are unit-length loadings.
    pub components: Array2<f64>,
    /// Variance of each component's scores on the training rows (divisor n - 1).
    pub explained_variance: Array1<f64>,
    /// Share of the total training variance.
    pub explained_variance_ratio: Array1<f64>,
    pub input_names: Vec<String>,
    names: Vec<String>,
}

impl Stage for Identity {
    fn reads_outcome(&self) -> bool {
        false
    }
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        Ok(Arc::new(IdentityFitted {
            names: input.names.to_vec(),
        }))
    }
}

impl Fitted for IdentityFitted {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        x.to_owned()
    }
    fn names(&self) -> &[String] {
        &self.names
    }
}

impl Pca {
    pub fn fit_pca(&self, x: ArrayView2<f64>, names: &[String]) -> Result<PcaFitted, FitError> {
        let (n, p) = x.dim();
        if self.k > p || self.k > n {
            return Err(FitError::Invalid(format!(
                "pca k={} but the training rows have {n} rows and {p} columns",
                self.k
            )));
        }
        let mean = x
            .mean_axis(Axis(0))
            .ok_or_else(|| FitError::Invalid("no rows".into()))?;
        let xc = &x - &mean;
        let denom = (n.max(2) - 1) as f64;
        let eig = |m: Array2<f64>| {
            m.eigh()
                .map(|e| e.sort_eig_desc())
                .map_err(|e| FitError::NoConvergence(format!("eigendecomposition: {e}")))
        };
        let mut components = Array2::zeros((self.k, p));
        let all_vals: Array1<f64> = if n >= p {
            let cov = xc.t().dot(&xc);
            let (vals, vecs) = eig(cov)?;
            for c in 0..self.k {
                components.row_mut(c).assign(&vecs.column(c));
            }
            vals
        } else {
            let gram = xc.dot(&xc.t());
            let (vals, vecs) = eig(gram)?;
            for c in 0..self.k {
                let s2 = vals[c];
                if s2 <= 1e-12 * vals[0].max(1e-300) {
                    return Err(FitError::Singular(format!(
                        "pca component {} has no variance on the training rows",
                        c + 1
                    )));
                }
                let v = xc.t().dot(&vecs.column(c)) / s2.sqrt();
                components.row_mut(c).assign(&v);
            }
            vals
        };
        for mut row in components.axis_iter_mut(Axis(0)) {
            let mut best = 0.0f64;
            for &v in row.iter() {
                if v.abs() > best.abs() + 1e-12 {
                    best = v;
                }
            }
            if best < 0.0 {
                row.mapv_inplace(|v| -v);
            }
        }
        let total: f64 = all_vals.iter().map(|v| v.max(0.0)).sum();
        let ev: Array1<f64> = all_vals
            .iter()
            .take(self.k)
            .map(|v| v.max(0.0) / denom)
            .collect();
        let ratio = if total > 0.0 {
            &ev * denom / total
        } else {
            Array1::zeros(self.k)
        };
        let out_names = (1..=self.k).map(|c| format!("pc{c}")).collect();
        Ok(PcaFitted {
            mean,
            components,
            explained_variance: ev,
            explained_variance_ratio: ratio,
            input_names: names.to_vec(),
            names: out_names,
        })
    }
}

impl Stage for Pca {
    fn reads_outcome(&self) -> bool {
        false
    }
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        Ok(Arc::new(self.fit_pca(input.x, input.names)?))
    }
}

impl Fitted for PcaFitted {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        (&x - &self.mean).dot(&self.components.t())
    }
    fn names(&self) -> &[String] {
        &self.names
    }
    fn loadings(&self) -> Option<(&Array2<f64>, &[String])> {
        Some((&self.components, &self.input_names))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn pca_on_hand_checked_data() {
        // x = (1,2,3,4), y = (2,1,4,3): centred cross-products [[5,3],[3,5]], whose
        // eigenvectors are (1,1)/sqrt(2) (eigenvalue 8) and (1,-1)/sqrt(2) (eigenvalue 2),
        // worked by hand; explained variance 8/(n-1) = 8/3, ratio 0.8.
        let x = array![[1.0, 2.0], [2.0, 1.0], [3.0, 4.0], [4.0, 3.0]];
        let names = vec!["a".to_string(), "b".to_string()];
        let f = Pca { k: 1 }.fit_pca(x.view(), &names).unwrap();
        let c = f.components.row(0);
        let h = std::f64::consts::FRAC_1_SQRT_2;
        assert!((c[0] - h).abs() < 1e-12 && (c[1] - h).abs() < 1e-12, "{c}");
        assert!((f.explained_variance[0] - 8.0 / 3.0).abs() < 1e-12);
        assert!((f.explained_variance_ratio[0] - 0.8).abs() < 1e-12);
        // The wide path (fewer rows than columns) gives unit-length loadings.
        let wide = x.t().to_owned();
        let names4: Vec<String> = (0..4).map(|i| format!("c{i}")).collect();
        let tall = Pca { k: 1 }.fit_pca(wide.view(), &names4).unwrap();
        assert_eq!(tall.components.ncols(), 4);
        assert!((tall.components.row(0).dot(&tall.components.row(0)) - 1.0).abs() < 1e-12);
        assert!(Pca { k: 3 }.fit_pca(x.view(), &names).is_err());
    }
}
