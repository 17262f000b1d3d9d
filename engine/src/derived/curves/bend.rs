//! The shape of one curve, chosen among a straight line, a continuous hinge and a jump:
//! a breakpoint is reported only when the data say so.
//!
//! - **flat**: the curve's range (max - min) is at most the flat tolerance: no fit, no
//!   breakpoint, no slopes.
//! - **line**: y = a + b x (2 parameters).
//! - **hinge**: y = a + b x + c max(0, x - t), continuous ([`super::fit_hinge`]; 4
//!   parameters counting t).
//! - **jump**: y = a + b x + c 1[x > t] + d max(0, x - t), a discontinuous hinge (5
//!   parameters counting t). For t between two neighbouring grid points x_i < t < x_{i+1}
//!   the model is the same whatever t is (the shift of t is absorbed by c), so it is two
//!   separate least-squares lines, one on x_0..x_i and one on x_{i+1}..x_{m-1} (each with
//!   at least two points); t is reported as the midpoint (x_i + x_{i+1}) / 2 of the gap
//!   with the least residual sum of squares (the first on ties). A pure step is the case
//!   b = d = 0.
//!
//! The hinge's t is the best of the 200-candidate search of [`super::fit_hinge`] and, per
//! gap between neighbouring grid points, the point where the gap's two separate lines
//! meet when it falls inside the gap (there the jump's fit is continuous, so it is the
//! exact best hinge with t in that gap).
//!
//! The choice: BIC = m ln(SSE / m) + p ln m over the m grid points (Schwarz 1978), with p
//! counting the breakpoint t as a parameter (common practice for segmented fits; an F-test
//! is not used because t does not exist under the line, so the F ratio has no F
//! distribution: Davies 1987, Hansen 1996). The hinge or the jump is kept only when its BIC
//! is below the line's by more than 6 ("strong" evidence on the scale of Kass and Raftery
//! 1995, recalled from memory): a searched breakpoint makes plain BIC too ready to bend (in
//! our simulation of noisy straight lines, about a quarter got a breakpoint with a margin of
//! 0, 2-6% with 6). Between the hinge and the jump the lower BIC wins, ties to the hinge.
//! SSE is floored at m (tol / 100)^2 (the curve is treated as exact to a hundredth of the
//! flat tolerance), so a curve that is a line up to rounding stays a line. Our own rule on
//! top: the two segments must differ by more than the flat tolerance at some grid point
//! right of t (the right segment against the left segment's line carried on), so a bend
//! too small to make a curve non-flat is not called a breakpoint. A model needs more grid
//! points than parameters (line 3, hinge 5, jump 6).

/// BIC margin by which a hinge or jump must beat the line.
pub const BIC_MARGIN: f64 = 6.0;

/// The chosen shape of a curve.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// The spec's pool does not hold the indicator (set by the caller; never chosen here).
    Absent,
    Flat,
    Line,
    Hinge,
    Jump,
}

impl Kind {
    pub fn name(self) -> &'static str {
        match self {
            Kind::Absent => "absent",
            Kind::Flat => "flat",
            Kind::Line => "line",
            Kind::Hinge => "hinge",
            Kind::Jump => "jump",
        }
    }

    /// A hinge or a jump: the shape has a breakpoint.
    pub fn bends(self) -> bool {
        matches!(self, Kind::Hinge | Kind::Jump)
    }
}

/// A curve's chosen shape. `breakpoint`, `jump` are NaN without a breakpoint; the slopes
/// are NaN for flat and absent curves and both equal the line's slope for a line. `jump`
/// is the right segment minus the left one at the breakpoint (0 for a hinge). `bic` holds
/// the line's, hinge's and jump's BIC (NaN when not fitted).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Shape {
    pub kind: Kind,
    pub breakpoint: f64,
    pub slope_left: f64,
    pub slope_right: f64,
    pub jump: f64,
    pub sse: f64,
    pub bic: [f64; 3],
}

impl Shape {
    /// A shape without a fit (flat or absent).
    pub fn none(kind: Kind) -> Shape {
        let nan = f64::NAN;
        Shape {
            kind,
            breakpoint: nan,
            slope_left: nan,
            slope_right: nan,
            jump: nan,
            sse: nan,
            bic: [nan; 3],
        }
    }
}

/// Least-squares line on (x, y) (at least two points, x not all equal): (intercept, slope,
/// SSE), computed on x centred at its mean.
pub fn fit_line(x: &[f64], y: &[f64]) -> Option<(f64, f64, f64)> {
    let n = x.len();
    if n < 2 || y.len() != n {
        return None;
    }
    let nf = n as f64;
    let mx = x.iter().sum::<f64>() / nf;
    let my = y.iter().sum::<f64>() / nf;
    let sxx: f64 = x.iter().map(|v| (v - mx) * (v - mx)).sum();
    if sxx.is_nan() || sxx <= 0.0 {
        return None;
    }
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let b = sxy / sxx;
    let a = my - b * mx;
    let sse = x
        .iter()
        .zip(y)
        .map(|(xi, yi)| {
            let e = yi - (my + b * (xi - mx));
            e * e
        })
        .sum();
    Some((a, b, sse))
}

/// One split of the grid between x_i and x_{i+1}: each side's least-squares line
/// (intercept, slope) and the summed SSE.
#[derive(Debug, Clone, Copy)]
struct Split {
    i: usize,
    left: (f64, f64),
    right: (f64, f64),
    sse: f64,
}

/// Every split with at least two points on each side.
fn splits(x: &[f64], y: &[f64]) -> Vec<Split> {
    let m = x.len();
    if m < 4 || y.len() != m {
        return Vec::new();
    }
    (1..m - 2)
        .filter_map(|i| {
            let l = fit_line(&x[..=i], &y[..=i])?;
            let r = fit_line(&x[i + 1..], &y[i + 1..])?;
            Some(Split {
                i,
                left: (l.0, l.1),
                right: (r.0, r.1),
                sse: l.2 + r.2,
            })
        })
        .collect()
}

/// The best jump (two separate lines split between neighbouring grid points, each side
/// with at least two points; the first least SSE on ties): (breakpoint, slope left, slope
/// right, jump at t, SSE).
pub fn fit_jump(x: &[f64], y: &[f64]) -> Option<(f64, f64, f64, f64, f64)> {
    let s = splits(x, y)
        .into_iter()
        .fold(None::<Split>, |b, s| match b {
            Some(b) if b.sse <= s.sse => Some(b),
            _ => Some(s),
        })?;
    let t = 0.5 * (x[s.i] + x[s.i + 1]);
    let jump = (s.right.0 + s.right.1 * t) - (s.left.0 + s.left.1 * t);
    Some((t, s.left.1, s.right.1, jump, s.sse))
}

/// The best continuous hinge: the 200-candidate search of [`super::fit_hinge`], improved by
/// each split whose two lines meet inside its gap (the exact best hinge with t there).
pub fn best_hinge(x: &[f64], y: &[f64]) -> Option<super::Hinge> {
    let mut best = super::fit_hinge(x, y);
    for s in splits(x, y) {
        let db = s.left.1 - s.right.1;
        if db == 0.0 {
            continue;
        }
        let t = (s.right.0 - s.left.0) / db;
        if t >= x[s.i] && t <= x[s.i + 1] && best.is_none_or(|b| s.sse < b.sse) {
            best = Some(super::Hinge {
                breakpoint: t,
                slope_left: s.left.1,
                slope_right: s.right.1,
                sse: s.sse,
            });
        }
    }
    best
}

/// BIC of a least-squares fit with `p` parameters on `m` points, SSE floored at `floor`.
fn bic(sse: f64, m: usize, p: usize, floor: f64) -> f64 {
    let mf = m as f64;
    mf * (sse.max(floor) / mf).ln() + p as f64 * mf.ln()
}

/// Choose the shape of `y` on the ascending grid `x` (see the module doc) with flat
/// tolerance `tol`. A curve with a non-finite value or fewer than three points is flat
/// when its finite range is within `tol`, else a line when one fits (NaN otherwise).
pub fn choose(x: &[f64], y: &[f64], tol: f64) -> Shape {
    let m = x.len();
    let hi = y.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let lo = y.iter().copied().fold(f64::INFINITY, f64::min);
    if y.len() != m || m == 0 || hi - lo <= tol {
        return Shape::none(Kind::Flat);
    }
    if y.iter().any(|v| !v.is_finite()) {
        return Shape::none(Kind::Line);
    }
    let Some((_, b, sse_l)) = fit_line(x, y).filter(|_| m >= 3) else {
        return Shape::none(Kind::Line);
    };
    let scale = y.iter().fold(1.0f64, |s, v| s.max(v.abs()));
    let floor = m as f64 * (tol / 100.0).max(1e-12 * scale).powi(2);
    let mut out = Shape {
        kind: Kind::Line,
        breakpoint: f64::NAN,
        slope_left: b,
        slope_right: b,
        jump: f64::NAN,
        sse: sse_l,
        bic: [bic(sse_l, m, 2, floor), f64::NAN, f64::NAN],
    };
    let mut best = out.bic[0] - BIC_MARGIN;
    // How far the right segment departs from the left one carried on, right of t.
    let depart = |t: f64, f: &dyn Fn(f64) -> f64| {
        x.iter()
            .filter(|&&v| v > t)
            .map(|&v| f(v).abs())
            .fold(0.0, f64::max)
    };
    if m >= 5 {
        if let Some(h) = best_hinge(x, y) {
            out.bic[1] = bic(h.sse, m, 4, floor);
            let c = h.slope_right - h.slope_left;
            let dev = depart(h.breakpoint, &|v| c * (v - h.breakpoint));
            if out.bic[1] < best && dev > tol {
                best = out.bic[1];
                (out.kind, out.breakpoint, out.slope_left, out.slope_right) =
                    (Kind::Hinge, h.breakpoint, h.slope_left, h.slope_right);
                (out.jump, out.sse) = (0.0, h.sse);
            }
        }
    }
    if m >= 6 {
        if let Some((t, sl, sr, j, sse)) = fit_jump(x, y) {
            out.bic[2] = bic(sse, m, 5, floor);
            let dev = depart(t, &|v| j + (sr - sl) * (v - t));
            if out.bic[2] < best && dev > tol {
                (out.kind, out.breakpoint, out.slope_left, out.slope_right) =
                    (Kind::Jump, t, sl, sr);
                (out.jump, out.sse) = (j, sse);
            }
        }
    }
    out
}
