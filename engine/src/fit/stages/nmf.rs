//! Non-negative matrix factorisation X ~ W H (X: n x p >= 0, W: n x k, H: k x p),
//! written here because no maintained Rust crate provides it.
//!
//! * Initialisation: NNDSVD (Boutsidis & Gallopoulos, 2008, "SVD based initialization: A
//!   head start for nonnegative matrix factorization", Pattern Recognition 41): the
//!   positive or negative part of each leading singular pair, whichever carries more mass.
//!   Deterministic; the SVD comes from the symmetric eigendecomposition of X^T X.
//! * Solver: HALS, hierarchical alternating least squares (Cichocki & Phan, 2009, "Fast
//!   local algorithms for large scale nonnegative matrix and tensor factorizations",
//!   IEICE Trans. Fundamentals E92-A): exact coordinate minimisation over one column of W,
//!   then one row of H, at a time, each clipped at zero. Every block update minimises the
//!   objective over that block, so ||X - WH||_F never increases. The same family as the
//!   cyclic coordinate descent of Hsieh & Dhillon (2011); the multiplicative updates of
//!   Lee & Seung (1999, 2001) are slower and not used.
//! * Stopping: relative decrease of the objective below `tol`, or `max_iter` sweeps; a fit
//!   that stops at `max_iter` says so ([`NmfFit::converged`] false), and the stage records
//!   a note in the spec's `notes`.
//! * New rows x are projected onto the fitted H by non-negative least squares,
//!   min_{w >= 0} ||x - w H||, solved by coordinate descent to convergence; negative input
//!   values (test rows below the training minimum after min-max scaling) are clipped at 0.

use crate::error::FitError;
use linfa_linalg::eigh::{EigSort, Eigh};
use ndarray::{Array1, Array2, ArrayView1, ArrayView2, Axis};

/// A fitted factorisation.
#[derive(Debug, Clone)]
pub struct NmfFit {
    pub w: Array2<f64>,
    /// k x p components (the loadings).
    pub h: Array2<f64>,
    /// ||X - WH||_F after each sweep (index 0: at initialisation).
    pub objective: Vec<f64>,
    /// False when the fit stopped at `max_iter` sweeps before the relative decrease of the
    /// objective fell to `tol`.
    pub converged: bool,
}

fn frob(x: ArrayView2<f64>, w: &Array2<f64>, h: &Array2<f64>) -> f64 {
    let r = &x - &w.dot(h);
    r.iter().map(|v| v * v).sum::<f64>().sqrt()
}

/// NNDSVD initialisation.
pub fn nndsvd(x: ArrayView2<f64>, k: usize) -> Result<(Array2<f64>, Array2<f64>), FitError> {
    let (n, p) = x.dim();
    let xtx = x.t().dot(&x);
    let (vals, vecs) = xtx
        .eigh()
        .map(|e| e.sort_eig_desc())
        .map_err(|e| FitError::NoConvergence(format!("nmf initialisation: {e}")))?;
    let mut w = Array2::zeros((n, k));
    let mut h = Array2::zeros((k, p));
    for j in 0..k {
        let s = vals[j].max(0.0).sqrt();
        if s <= 1e-12 {
            continue; // no more signal: leave the component at zero
        }
        let v = vecs.column(j).to_owned();
        let u = x.dot(&v) / s;
        if j == 0 {
            w.column_mut(0).assign(&(u.mapv(f64::abs) * s.sqrt()));
            h.row_mut(0).assign(&(v.mapv(f64::abs) * s.sqrt()));
            continue;
        }
        let pos = |a: &Array1<f64>| a.mapv(|t| t.max(0.0));
        let neg = |a: &Array1<f64>| a.mapv(|t| (-t).max(0.0));
        let norm = |a: &Array1<f64>| a.dot(a).sqrt();
        let (up, un, vp, vn) = (pos(&u), neg(&u), pos(&v), neg(&v));
        let (mp, mn) = (norm(&up) * norm(&vp), norm(&un) * norm(&vn));
        let (uu, vv, sigma) = if mp >= mn { (up, vp, mp) } else { (un, vn, mn) };
        if sigma <= 0.0 {
            continue;
        }
        let lbd = (s * sigma).sqrt();
        let (nu, nv) = (norm(&uu), norm(&vv));
        w.column_mut(j).assign(&(uu * (lbd / nu)));
        h.row_mut(j).assign(&(vv * (lbd / nv)));
    }
    Ok((w, h))
}

/// Factorise `x` (must be non-negative) into k components.
pub fn fit(x: ArrayView2<f64>, k: usize, max_iter: usize, tol: f64) -> Result<NmfFit, FitError> {
    if let Some(v) = x.iter().find(|v| **v < 0.0 || !v.is_finite()) {
        return Err(FitError::Invalid(format!(
            "nmf needs non-negative finite input, found {v}"
        )));
    }
    let (mut w, mut h) = nndsvd(x, k)?;
    let mut objective = vec![frob(x, &w, &h)];
    let mut converged = false;
    for _ in 0..max_iter {
        // W columns: W[:, j] <- max(0, W[:, j] + (X H^T - W H H^T)[:, j] / (H H^T)[j, j]).
        let xht = x.dot(&h.t());
        let hht = h.dot(&h.t());
        for j in 0..k {
            let d = hht[[j, j]];
            if d <= 1e-300 {
                continue;
            }
            let grad = &xht.column(j) - &w.dot(&hht.column(j));
            let col = (&w.column(j) + &(grad / d)).mapv(|t| t.max(0.0));
            w.column_mut(j).assign(&col);
        }
        // H rows: H[j, :] <- max(0, H[j, :] + (W^T X - W^T W H)[j, :] / (W^T W)[j, j]).
        let wtx = w.t().dot(&x);
        let wtw = w.t().dot(&w);
        for j in 0..k {
            let d = wtw[[j, j]];
            if d <= 1e-300 {
                continue;
            }
            let grad = &wtx.row(j) - &wtw.row(j).dot(&h);
            let row = (&h.row(j) + &(grad / d)).mapv(|t| t.max(0.0));
            h.row_mut(j).assign(&row);
        }
        let obj = frob(x, &w, &h);
        let prev = *objective.last().unwrap_or(&obj);
        objective.push(obj);
        if prev - obj <= tol * prev.max(1e-300) {
            converged = true;
            break;
        }
    }
    Ok(NmfFit {
        w,
        h,
        objective,
        converged,
    })
}

/// Rows solved side by side by [`project`]: each row's descent is one long chain of
/// dependent steps, so several rows interleaved keep the processor busy.
const PROJECT_BLOCK: usize = 8;

/// Non-negative least squares min_{w >= 0} ||x_i - w H|| for each row x_i of `x`, by
/// cyclic coordinate descent (converges: the problem is convex; strictly when H H^T is
/// positive definite), sweeping until no coordinate moves by 1e-13 (relative, for values
/// above 1) or 10,000 sweeps. Rows are solved in blocks of [`PROJECT_BLOCK`], coordinate by
/// coordinate across the block's unfinished rows; each row takes exactly the steps it
/// would alone.
pub fn project(x: ArrayView2<f64>, h: &Array2<f64>) -> Array2<f64> {
    let k = h.nrows();
    // H H^T row-major (`iter` walks in logical order).
    let hht: Vec<f64> = h.dot(&h.t()).iter().copied().collect();
    let mut out = Array2::zeros((x.nrows(), k));
    let rows: Vec<ArrayView1<f64>> = x.axis_iter(Axis(0)).collect();
    for (bi, block) in rows.chunks(PROJECT_BLOCK).enumerate() {
        let m = block.len();
        let xh: Vec<Array1<f64>> = block
            .iter()
            .map(|r| h.dot(&r.mapv(|v| v.max(0.0))))
            .collect();
        let mut w = vec![0.0f64; m * k];
        let mut open = [true; PROJECT_BLOCK];
        let mut change = [0.0f64; PROJECT_BLOCK];
        for _ in 0..10_000 {
            change[..m].fill(0.0);
            for j in 0..k {
                let hrow = &hht[j * k..(j + 1) * k];
                let d = hrow[j];
                if d <= 1e-300 {
                    continue;
                }
                for r in 0..m {
                    if !open[r] {
                        continue;
                    }
                    let wr = &mut w[r * k..(r + 1) * k];
                    let g = xh[r][j] - dot(wr, hrow);
                    let new = (wr[j] + g / d).max(0.0);
                    change[r] =
                        change[r].max((new - wr[j]).abs() / wr[j].abs().max(1e-12).max(1.0));
                    wr[j] = new;
                }
            }
            let mut any = false;
            for r in 0..m {
                open[r] &= change[r] >= 1e-13;
                any |= open[r];
            }
            if !any {
                break;
            }
        }
        for r in 0..m {
            out.row_mut(bi * PROJECT_BLOCK + r)
                .assign(&ArrayView1::from(&w[r * k..(r + 1) * k]));
        }
    }
    out
}

/// The dot product of two slices of equal length, summed in the order ndarray's
/// `unrolled_dot` sums (eight running sums over blocks of eight, combined in pairs, then
/// the tail in order), as `Array1::dot` did here before: the same results to the bit,
/// interleaved across rows.
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut p = [0.0f64; 8];
    let (mut a, mut b) = (a, b);
    while a.len() >= 8 {
        for q in 0..8 {
            p[q] += a[q] * b[q];
        }
        a = &a[8..];
        b = &b[8..];
    }
    let mut sum = 0.0;
    sum += p[0] + p[4];
    sum += p[1] + p[5];
    sum += p[2] + p[6];
    sum += p[3] + p[7];
    for (x, y) in a.iter().zip(b) {
        sum += x * y;
    }
    sum
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    /// One row at a time with ndarray's products, as `project` was written before rows
    /// were interleaved.
    fn project_row_alone(x: ArrayView1<f64>, h: &Array2<f64>, hht: &Array2<f64>) -> Array1<f64> {
        let k = h.nrows();
        let xh = h.dot(&x.mapv(|v| v.max(0.0)));
        let mut w = Array1::<f64>::zeros(k);
        for _ in 0..10_000 {
            let mut change = 0.0f64;
            for j in 0..k {
                let d = hht[[j, j]];
                if d <= 1e-300 {
                    continue;
                }
                let g = xh[j] - w.dot(&hht.row(j));
                let new = (w[j] + g / d).max(0.0);
                change = change.max((new - w[j]).abs() / w[j].abs().max(1e-12).max(1.0));
                w[j] = new;
            }
            if change < 1e-13 {
                break;
            }
        }
        w
    }

    /// Interleaving rows changes no row's result: bit for bit against one row at a time,
    /// with 1, 3 and 11 components (past ndarray's eightfold unrolled products), a zero
    /// component row (skipped), a row count that leaves a partial block, and rows that
    /// need few or many sweeps.
    #[test]
    fn interleaved_rows_equal_rows_alone_bit_for_bit() {
        use rand::{Rng, SeedableRng};
        let mut g = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        for k in [1usize, 3, 11] {
            let mut h = Array2::from_shape_fn((k, 14), |_| g.gen_range(0.0..2.0));
            if k > 1 {
                h.row_mut(1).fill(0.0);
            }
            let x =
                Array2::from_shape_fn(
                    (19, 14),
                    |(i, _)| {
                        if i == 4 {
                            0.0
                        } else {
                            g.gen_range(-0.5..3.0)
                        }
                    },
                );
            let hht = h.dot(&h.t());
            let got = project(x.view(), &h);
            for (i, row) in x.axis_iter(Axis(0)).enumerate() {
                let want = project_row_alone(row, &h, &hht);
                let same = got
                    .row(i)
                    .iter()
                    .zip(&want)
                    .all(|(a, b)| a.to_bits() == b.to_bits());
                assert!(same, "k {k}, row {i}: {:?} vs {want:?}", got.row(i));
            }
        }
    }

    #[test]
    fn exact_low_rank_is_recovered_and_objective_never_rises() {
        let w0 = array![[1.0, 0.0], [0.5, 1.0], [0.0, 2.0], [1.5, 0.5], [0.2, 0.1]];
        let h0 = array![[1.0, 0.0, 2.0, 1.0], [0.0, 1.0, 0.5, 3.0]];
        let x = w0.dot(&h0);
        let f = fit(x.view(), 2, 2000, 1e-14).unwrap();
        for pair in f.objective.windows(2) {
            assert!(
                pair[1] <= pair[0] * (1.0 + 1e-12) + 1e-12 * f.objective[0],
                "objective rose: {pair:?}"
            );
        }
        let last = *f.objective.last().unwrap();
        assert!(last < 1e-4 * f.objective[0].max(1.0), "final {last}");
        assert!(fit((-&x).view(), 2, 10, 1e-6).is_err());
    }
}
