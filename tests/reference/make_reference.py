"""Write the reference values forkmap's Rust tests compare against.

Every value here comes from a library outside the project (scikit-learn, statsmodels,
numpy) or from data they ship; nothing is computed by forkmap. Run:

    python tests/reference/make_reference.py [OUT_DIR]

OUT_DIR defaults to this folder (the committed copies). The test command regenerates them
into target/reference and the Rust tests read that folder (FORKMAP_REFERENCE_DIR), so CI
checks against the libraries as installed, not only against committed numbers.
"""

import json
import os
import sys

import numpy as np
import scipy
import scipy.stats
import sklearn
import statsmodels
import statsmodels.api as sm
from sklearn.datasets import load_diabetes
from sklearn.linear_model import Ridge
from sklearn.metrics import mean_absolute_error, mean_squared_error, r2_score
from sklearn.tree import DecisionTreeRegressor

out = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
os.makedirs(out, exist_ok=True)
versions = {
        "numpy": np.__version__,
    "scipy": scipy.__version__,
    "scikit-learn": sklearn.__version__,
    "statsmodels": statsmodels.__version__,
}


def dump(name, obj):
    obj["_source_versions"] = versions
    with open(os.path.join(out, name), "w") as f:
        json.dump(obj, f, indent=1, sort_keys=True)
        f.write("\n")


# Metrics on fixed vectors. The first pair is the example of scikit-learn's documentation
# of mean_absolute_error / mean_squared_error / r2_score; the second is a fixed seeded draw.
rng = np.random.default_rng(7)
cases = [([3.0, -0.5, 2.0, 7.0], [2.5, 0.0, 2.0, 8.0])]
a = rng.normal(10, 3, 50)
cases.append((a.tolist(), (a + rng.normal(0, 1.5, 50)).tolist()))
# A case with ties (for ranks) and repeated units.
cases.append(([1.0, 2.0, 2.0, 3.0, 5.0, 5.0, 8.0, 9.0], [1.5, 2.5, 1.0, 3.0, 4.0, 6.5, 8.0, 7.0]))
# Each case also has a set of "training" outcomes (skewed, so median and mean differ): the
# baseline predicts every observed value by their median (numpy.median); its MAE and
# skill = 1 - MAE / baseline MAE are computed here.
trains = [
    [0.5, 1.0, 1.5, 2.0, 2.5, 40.0],
    (rng.lognormal(2.0, 0.6, 41)).tolist(),
    [1.0, 1.0, 2.0, 3.0, 30.0],
]
metric_cases = []
for (t, p), train in zip(cases, trains, strict=True):
    t_, p_ = np.asarray(t), np.asarray(p)
    units = [i // 2 for i in range(len(t))]  # rows 0-1 are unit 0, rows 2-3 unit 1, ...
    err = np.abs(t_ - p_)
    per_unit = [err[[k for k in range(len(t)) if units[k] == u]].mean() for u in sorted(set(units))]
    metric_cases.append(
        {
            "observed": t,
            "predicted": p,
            "units": units,
            "mae": mean_absolute_error(t, p),
            "rmse": float(np.sqrt(mean_squared_error(t, p))),
            "r2": r2_score(t, p),
            "spearman": float(scipy.stats.spearmanr(t, p).statistic),
            "top_quartile_mae": float(err[t_ >= np.quantile(t_, 0.75)].mean()),
            "unit_mae": float(np.mean(per_unit)),
            "train": train,
            "baseline": float(np.median(train)),
            "baseline_mae": mean_absolute_error(t, np.full(len(t), np.median(train))),
            "skill": 1.0 - mean_absolute_error(t, p) / mean_absolute_error(t, np.full(len(t), np.median(train))),
        }
    )
dump("metrics.json", {"cases": metric_cases})

# Longley (NIST StRD); the data ship with statsmodels. statsmodels' OLS fit is stored as
# a second, independent reference beside NIST's certified values (held in the Rust test).
longley = sm.datasets.longley.load_pandas()
exog = sm.add_constant(longley.exog, prepend=True)
fit = sm.OLS(longley.endog, exog).fit()
dump(
    "longley.json",
    {
        "x": longley.exog.values.tolist(),
        "x_columns": list(longley.exog.columns),
        "y": longley.endog.values.tolist(),
        "statsmodels_params": fit.params.values.tolist(),
    },
)

# Diabetes (Efron et al. 2004), shipped with scikit-learn (scaled features).
X, y = load_diabetes(return_X_y=True)
weights = np.array([1.0 + (i % 3) for i in range(len(y))])  # integer weights 1, 2, 3
ridge = []
for alpha in [0.1, 1.0, 10.0]:
    m = Ridge(alpha=alpha).fit(X, y)
    mw = Ridge(alpha=alpha).fit(X, y, sample_weight=weights)
    ridge.append(
        {
            "alpha": alpha,
            "coef": m.coef_.tolist(),
            "intercept": float(m.intercept_),
            "weighted_coef": mw.coef_.tolist(),
            "weighted_intercept": float(mw.intercept_),
        }
    )
# Lasso and elastic net (scikit-learn's alpha convention: 1/(2n) squared error + penalty).
from sklearn.linear_model import ElasticNet, Lasso

sparse = []
for alpha, l1 in [(0.1, 1.0), (0.5, 1.0), (0.05, 0.5), (0.01, 0.2)]:
    make = (lambda: Lasso(alpha=alpha, tol=1e-12, max_iter=1_000_000)) if l1 == 1.0 else (
        lambda: ElasticNet(alpha=alpha, l1_ratio=l1, tol=1e-12, max_iter=1_000_000)
    )
    m = make().fit(X, y)
    mw = make().fit(X, y, sample_weight=weights)
    sparse.append(
        {
            "alpha": alpha,
            "l1_ratio": l1,
            "coef": m.coef_.tolist(),
            "intercept": float(m.intercept_),
            "weighted_coef": mw.coef_.tolist(),
            "weighted_intercept": float(mw.intercept_),
        }
    )
# PLS regression without internal scaling (forkmap's scale stage runs before it).
from sklearn.cross_decomposition import PLSRegression

pls = []
for k in [1, 2, 4]:
    m = PLSRegression(n_components=k, scale=False, tol=1e-12, max_iter=1000).fit(X, y)
    pls.append({"k": k, "predictions": m.predict(X).ravel().tolist(), "x_scores": m.transform(X).tolist()})
# Tree ensembles and neighbours: out-of-fold predictions over scikit-learn's KFold(5)
# (contiguous folds, no shuffle). scikit-learn breaks ties between equally good splits by
# its random_state, so for the deterministic families the predictions under ten seeds are
# stored (a row whose prediction differs between seeds sits behind a tie). For the
# stochastic ensembles the spread of the OOF MAE over five seeds sets the tolerance.
from sklearn.ensemble import ExtraTreesRegressor, GradientBoostingRegressor, RandomForestRegressor
from sklearn.model_selection import KFold, cross_val_predict
from sklearn.neighbors import KNeighborsRegressor

kf = KFold(5)
oof = {}
def oof_case(name, make, seeds=None):
    if seeds is None:
        ps = [cross_val_predict(make(s), X, y, cv=kf) for s in range(10)]
        oof[name] = {"predictions_by_seed": [p.tolist() for p in ps], "mae": float(np.abs(ps[0] - y).mean())}
    else:
        maes = [float(np.abs(cross_val_predict(make(s), X, y, cv=kf) - y).mean()) for s in seeds]
        oof[name] = {"mae": float(np.mean(maes)), "mae_seed_sd": float(np.std(maes, ddof=1))}

oof_case("tree_depth4_leaf5", lambda s: DecisionTreeRegressor(max_depth=4, min_samples_leaf=5, random_state=s))
oof_case("boost_100_rate0.1_depth3_leaf5", lambda s: GradientBoostingRegressor(n_estimators=100, learning_rate=0.1, max_depth=3, min_samples_leaf=5, random_state=s))
oof_case("nearest_5", lambda s: KNeighborsRegressor(n_neighbors=5))
# Boosting in sample on all rows, 20 rounds: the algorithm itself, free of the near-ties
# between collinear features that out-of-fold predictions can fall on.
boost20 = GradientBoostingRegressor(n_estimators=20, learning_rate=0.1, max_depth=3, min_samples_leaf=5, random_state=0).fit(X, y)
oof_case("forest_300_tried0.3_leaf3", lambda s: RandomForestRegressor(n_estimators=300, max_features=0.3, min_samples_leaf=3, random_state=s), seeds=range(5))
oof_case("extra_300_tried1_leaf3", lambda s: ExtraTreesRegressor(n_estimators=300, max_features=1.0, min_samples_leaf=3, random_state=s), seeds=range(5))
# Permutation importance of a ridge fitted on all rows, scored in sample (neg MSE).
from sklearn.inspection import permutation_importance

rp = Ridge(alpha=0.1).fit(X, y)
pi = permutation_importance(rp, X, y, scoring="neg_mean_squared_error", n_repeats=30, random_state=0)
# Principal components of the diabetes features by numpy's SVD.
Xc = X - X.mean(axis=0)
s = np.linalg.svd(Xc, compute_uv=False)
ev = s**2 / (len(y) - 1)
# A depth-3 regression tree (min 5 rows per leaf); in-sample predictions.
tree = DecisionTreeRegressor(max_depth=3, min_samples_leaf=5, random_state=0).fit(X, y)
dump(
    "diabetes.json",
    {
        "x": X.tolist(),
        "y": y.tolist(),
        "weights": weights.tolist(),
                "ridge": ridge,
                                "sparse": sparse,
        "feature_names": list(load_diabetes().feature_names),
        "ridge_permutation_importance": {"mean": pi.importances_mean.tolist(), "std": pi.importances_std.tolist()},
                "oof": oof,
        "boost20_in_sample": boost20.predict(X).tolist(),
        "pls": pls,
        "pca_explained_variance": ev.tolist(),
        "pca_explained_variance_ratio": (ev / ev.sum()).tolist(),
        "tree_depth3_leaf5_predictions": tree.predict(X).tolist(),
    },
)
# NMF: a fixed non-negative matrix (low rank plus noise), scikit-learn's NMF with the
# NNDSVD initialisation and its coordinate-descent solver run to a tight tolerance.
from sklearn.decomposition import NMF

rng = np.random.default_rng(11)
Xn = rng.uniform(0, 1, (40, 4)) @ rng.uniform(0, 1, (4, 12)) + rng.uniform(0, 0.1, (40, 12))
nmf_cases = []
for k in [2, 3, 5]:
    m = NMF(n_components=k, init="nndsvd", solver="cd", tol=1e-10, max_iter=5000, random_state=0)
    m.fit(Xn)
    nmf_cases.append({"k": k, "sklearn_objective": float(m.reconstruction_err_)})
dump("nmf.json", {"x": Xn.tolist(), "cases": nmf_cases})
# Lasso and elastic net where coordinate descent crawls: 60 rows, 50 collinear indicators
# (five latent factors plus a little noise, standardised), small penalties, so most
# coefficients are nonzero. scikit-learn to a tight tolerance.
rng = np.random.default_rng(23)
Z = rng.normal(0, 1, (60, 5))
Xh = Z @ rng.normal(0, 1, (5, 50)) + rng.normal(0, 0.05, (60, 50))
Xh = (Xh - Xh.mean(axis=0)) / Xh.std(axis=0)
yh = Xh[:, :8] @ rng.normal(0, 1, 8) + rng.normal(0, 0.5, 60)
hard = []
for alpha, l1 in [(0.001, 1.0), (0.01, 1.0), (0.001, 0.5)]:
    m = (Lasso(alpha=alpha, tol=1e-14, max_iter=10_000_000) if l1 == 1.0 else
         ElasticNet(alpha=alpha, l1_ratio=l1, tol=1e-14, max_iter=10_000_000)).fit(Xh, yh)
    b = m.coef_
    obj = 0.5 / len(yh) * np.sum((yh - m.predict(Xh)) ** 2) + alpha * l1 * np.abs(b).sum() + 0.5 * alpha * (1 - l1) * np.sum(b**2)
    hard.append({"alpha": alpha, "l1_ratio": l1, "fitted": m.predict(Xh).tolist(), "objective": float(obj),
                 "nonzero": int(np.sum(b != 0)), "n_iter": int(m.n_iter_)})
dump("lasso_collinear.json", {"x": Xh.tolist(), "y": yh.tolist(), "cases": hard})
# kNN gap filling: scikit-learn's KNNImputer fitted on the first 20 rows of a fixed
# matrix with gaps, applied to those rows and to 10 more.
from sklearn.impute import KNNImputer

rng = np.random.default_rng(5)
Xk = rng.normal(0, 1, (30, 5)) @ rng.normal(0, 1, (5, 5))
Xk[rng.uniform(0, 1, Xk.shape) < 0.15] = np.nan
imp = KNNImputer(n_neighbors=3).fit(Xk[:20])
nan_to_none = lambda a: [[None if np.isnan(v) else float(v) for v in row] for row in a]
dump(
    "knn_fill.json",
    {
        "x": nan_to_none(Xk),
        "k": 3,
        "train_rows": 20,
        "filled_train": imp.transform(Xk[:20]).tolist(),
        "filled_test": imp.transform(Xk[20:]).tolist(),
    },
)
# Screening pool: |Pearson correlation| of each column with the outcome over the rows where
# the column has a value (pairwise-complete), as pandas' DataFrame.corrwith computes it.
# Every column keeps at least 3 values and varies (forkmap scores those cases 0 by its own
# rule, checked by hand in engine/src/fit/stages/pool.rs).
import pandas as pd

rng = np.random.default_rng(11)
ys = rng.normal(0, 1, 40)
Xs = rng.normal(0, 1, (40, 8)) + np.outer(ys, [1.0, -0.8, 0.5, 0.3, 0.0, -0.2, 0.1, 0.05])
Xs[rng.uniform(0, 1, Xs.shape) < 0.25] = np.nan
Xs[:30, 4] = np.nan  # a column with only 10 values
corr = pd.DataFrame(Xs).corrwith(pd.Series(ys))
versions["pandas"] = pd.__version__
dump(
    "screen.json",
    {
        "x": nan_to_none(Xs),
        "y": ys.tolist(),
        "abs_corr": corr.abs().tolist(),
        # The 3 largest, by a stable sort (ties: the earlier column), in column order.
        "top3": sorted(np.argsort(-corr.abs().to_numpy(), kind="stable")[:3].tolist()),
    },
)


# ---- The report (`forkmap map`): tau-b, the LMG decomposition, bootstrap intervals. ----
# Kendall's tau-b with ties: scipy.stats.kendalltau (variant "b", its default).
rng = np.random.default_rng(17)
tau_cases = []
for n, levels in [(12, 4), (40, 6), (90, 90), (25, 2)]:
    x = rng.integers(0, levels, n).astype(float)
    y = (x + rng.integers(0, 3, n)).astype(float)
    if n == 90:
        y = rng.normal(size=n)
    tau_cases.append(
        {"x": x.tolist(), "y": y.tolist(), "tau_b": float(scipy.stats.kendalltau(x, y, variant="b").statistic)}
    )

# LMG (Lindeman, Merenda & Gold 1980; Groemping 2006): R^2 of statsmodels OLS of y on the
# dummy-coded factors for every subset of factors, averaged over orderings (Shapley
# weights). An unbalanced design (unequal cells, one combination excluded, a sparse
# level) with known additive effects plus one interaction and noise.
from itertools import combinations
from math import factorial

f_levels = [3, 2, 4]
rows = []
for a in range(3):
    for b in range(2):
        for c in range(4):
            if a == 2 and b == 1:
                continue  # an excluded combination
            reps = 1 + (a + 2 * c) % 4  # unequal cell sizes
            if c == 3:
                reps = 1  # a sparse level
            rows.extend([(a, b, c)] * reps)
rows = np.array(rows)
eff_a, eff_b, eff_c = np.array([0.0, 1.5, -0.5]), np.array([0.0, 0.8]), np.array([0.0, 0.3, -0.2, 1.1])
y = (
    eff_a[rows[:, 0]]
    + eff_b[rows[:, 1]]
    + eff_c[rows[:, 2]]
    + 0.4 * (rows[:, 0] == 1) * (rows[:, 2] == 2)
    + rng.normal(0, 0.3, len(rows))
)


def dummies(cols):
    parts = [np.ones((len(rows), 1))]
    for f in cols:
        levels_present = sorted(set(rows[:, f]))
        for lv in levels_present[1:]:
            parts.append((rows[:, f] == lv).astype(float)[:, None])
    return np.hstack(parts)


m = len(f_levels)
r2 = {}
for k in range(m + 1):
    for sub in combinations(range(m), k):
        r2[sub] = 0.0 if k == 0 else float(sm.OLS(y, dummies(sub)).fit().rsquared)
parts = []
for j in range(m):
    v = 0.0
    for k in range(m):
        for sub in combinations([i for i in range(m) if i != j], k):
            w = factorial(k) * factorial(m - k - 1) / factorial(m)
            v += w * (r2[tuple(sorted(sub + (j,)))] - r2[sub])
    parts.append(v)
lmg = {
    "levels": rows.T.tolist(),
    "y": y.tolist(),
    "r2_total": r2[tuple(range(m))],
    "parts": parts,
    "alone": [r2[(j,)] for j in range(m)],
}

# Bootstrap percentile intervals: per-unit error sums of a few specs, fixed resample
# indices drawn here, the metric on each resample and numpy.percentile (linear).
n_units, n_res = 9, 400
unit_n = rng.integers(1, 4, n_units).astype(float)  # rows per unit (waves x repeats)
specs = []
for s in range(3):
    errs = [rng.normal(0, 1 + s * 0.3, int(k)) for k in unit_n]
    specs.append({"abs": [float(np.abs(e).sum()) for e in errs], "sq": [float((e**2).sum()) for e in errs]})
idx = rng.integers(0, n_units, (n_res, n_units))
boot = []
for sp in specs:
    a_, q_ = np.array(sp["abs"]), np.array(sp["sq"])
    out_s = {}
    for metric in ["mae", "rmse", "unit_mae"]:
        reps = []
        for r in range(n_res):
            c = np.bincount(idx[r], minlength=n_units).astype(float)
            if metric == "mae":
                reps.append((c * a_).sum() / (c * unit_n).sum())
            elif metric == "rmse":
                reps.append(np.sqrt((c * q_).sum() / (c * unit_n).sum()))
            else:
                reps.append((c * a_ / unit_n).sum() / c.sum())
        lo, hi = np.percentile(reps, [2.5, 97.5])
        out_s[metric] = {"lower": float(lo), "upper": float(hi), "sd": float(np.std(reps, ddof=1))}
    boot.append(out_s)
dump(
    "report.json",
    {
        "tau_b": tau_cases,
        "lmg": lmg,
        "bootstrap": {"unit_n": unit_n.tolist(), "indices": idx.tolist(), "specs": specs, "level": 0.95, "results": boot},
    },
)

# The curves' subgroups and breakpoints (engine/src/derived/curves): scikit-learn's silhouette_score
# (Euclidean) and KMeans on fixed small datasets, and the hinge breakpoint against a
# brute-force numpy least-squares fit over the same candidate breakpoints (200 evenly
# spaced between the second and the second-to-last grid points, the first least SSE wins).
from sklearn.cluster import KMeans
from sklearn.metrics import silhouette_score

rng = np.random.default_rng(19)
sil_cases = []
# Three blobs in 2-D, one blob with a singleton (sklearn scores a singleton 0), and 5-D
# curves-like rows with two groups.
xa = np.vstack([rng.normal(c, 0.4, (8, 2)) for c in ([0, 0], [3, 0], [0, 3])])
sil_cases.append({"x": xa.tolist(), "labels": [0] * 8 + [1] * 8 + [2] * 8})
xb = np.vstack([rng.normal(0, 1, (6, 3)), [[9.0, 9.0, 9.0]]])
sil_cases.append({"x": xb.tolist(), "labels": [0, 0, 0, 1, 1, 1, 2]})
xc = rng.normal(0, 1, (15, 5))
sil_cases.append({"x": xc.tolist(), "labels": (rng.permutation(15) % 2).tolist()})
for c in sil_cases:
    c["silhouette"] = float(silhouette_score(np.array(c["x"]), np.array(c["labels"]), metric="euclidean"))

# KMeans as the curves' k-means runs it: k-means++ starts, Lloyd, the best of 50 starts
# (n_init=50); tol=0, so each start runs until no label changes (as ours does).
def sk_kmeans(x, k):
    return KMeans(n_clusters=k, n_init=50, random_state=0, algorithm="lloyd", tol=0.0).fit(x)


km_cases = []
for k, centres in [(2, [[0, 0, 0], [4, 4, 4]]), (3, [[0, 0], [5, 0], [0, 5]]), (4, [[0, 0], [6, 0], [0, 6], [6, 6]])]:
    x = np.vstack([rng.normal(c, 0.5, (7 + i, len(c))) for i, c in enumerate(centres)])
    km = sk_kmeans(x, k)
    km_cases.append({"x": x.tolist(), "k": k, "labels": km.labels_.tolist(), "inertia": float(km.inertia_)})

# Data without well-separated groups (uniform; overlapping blobs; curve-like rows with a
# continuous spread of amplitudes), where k-means has local optima: only the inertia of
# the best of 50 starts is compared, for k = 2..5.
rng_km = np.random.default_rng(2007)
grid = np.linspace(0, 1, 12)
km_hard = []
for name, x in [
    ("uniform 3-D", rng_km.uniform(0, 1, (50, 3))),
    ("overlapping blobs 5-D", np.vstack([rng_km.normal(c, 1.0, (20, 5)) for c in (0.0, 1.0, 2.0)])),
    (
        "curves with spread amplitudes",
        np.outer(rng_km.uniform(0.5, 2.0, 40), np.sin(2 * np.pi * grid)) + rng_km.normal(0, 0.2, (40, 12)),
    ),
]:
    km_hard.append({"name": name, "x": x.tolist(), "inertia": {str(k): float(sk_kmeans(x, k).inertia_) for k in range(2, 6)}})

hinge_cases = []
for t_true, noise, n in [(6.3, 0.0, 20), (2.5, 0.05, 12), (0.7, 0.3, 30), (4.0, 0.0, 8)]:
    x = np.sort(rng.uniform(0, 10 if t_true > 1 else 1.5, n))
    y = 1.0 + 0.5 * x - 2.0 * np.maximum(0, x - t_true) + rng.normal(0, noise, n)
    best = None
    for t in np.linspace(x[1], x[-2], 200):
        a = np.column_stack([np.ones(n), x, np.maximum(0, x - t)])
        z, *_ = np.linalg.lstsq(a, y, rcond=None)
        sse = float(((y - a @ z) ** 2).sum())
        if best is None or sse < best[0]:
            best = (sse, float(t), float(z[1]), float(z[1] + z[2]))
    hinge_cases.append({"x": x.tolist(), "y": y.tolist(), "sse": best[0], "breakpoint": best[1], "slope_left": best[2], "slope_right": best[3]})

# The curve's shape (engine/src/derived/curves/bend.rs), computed here with numpy.linalg.lstsq on
# each model's own design matrix: the line [1, x]; the continuous hinge [1, x, (x-t)+] at
# the 200 candidates of the hinge above and at each gap's meeting point of the jump's two
# lines; the jump [1, x, 1[x>t], (x-t)+] at each gap's midpoint (at least two points each
# side). BIC = m ln(max(SSE, m (tol/100)^2) / m) + p ln m with p = 2, 4, 5; a hinge or jump
# is kept when its BIC is below the line's by more than 6 and its right segment departs
# from the left one carried on by more than tol at some grid point right of t.
def lstsq_sse(a, y):
    z, *_ = np.linalg.lstsq(a, y, rcond=None)
    return z, float(((y - a @ z) ** 2).sum())


def choose_shape(x, y, tol):
    m = len(x)
    if y.max() - y.min() <= tol:
        return {"kind": "flat"}
    one = np.ones(m)
    floor = m * max(tol / 100, 1e-12 * max(1.0, np.abs(y).max())) ** 2
    bic = lambda sse, p: m * np.log(max(sse, floor) / m) + p * np.log(m)
    zl, sl = lstsq_sse(np.column_stack([one, x]), y)
    out = {"kind": "line", "breakpoint": None, "slope_left": zl[1], "slope_right": zl[1], "jump": None, "sse": sl}
    b = [bic(sl, 2), None, None]
    cands = list(np.linspace(x[1], x[-2], 200))
    for i in range(1, m - 2):
        l, _ = lstsq_sse(np.column_stack([one[: i + 1], x[: i + 1]]), y[: i + 1])
        r, _ = lstsq_sse(np.column_stack([one[i + 1 :], x[i + 1 :]]), y[i + 1 :])
        if l[1] != r[1]:
            t = (r[0] - l[0]) / (l[1] - r[1])
            if x[i] <= t <= x[i + 1]:
                cands.append(t)
    h = None
    for t in cands:
        z, sse = lstsq_sse(np.column_stack([one, x, np.maximum(0, x - t)]), y)
        if h is None or sse < h[0] - 1e-12 * max(h[0], 1e-300):
            h = (sse, t, z[1], z[1] + z[2])
    j = None
    for i in range(1, m - 2):
        t = 0.5 * (x[i] + x[i + 1])
        z, sse = lstsq_sse(np.column_stack([one, x, (x > t) * 1.0, np.maximum(0, x - t)]), y)
        if j is None or sse < j[0]:
            j = (sse, t, z[1], z[1] + z[3], z[2])
    b[1], b[2] = bic(h[0], 4), bic(j[0], 5)
    best = b[0] - 6
    dev_h = max(abs((h[3] - h[2]) * (v - h[1])) for v in x if v > h[1])
    if b[1] < best and dev_h > tol:
        best = b[1]
        out.update(kind="hinge", breakpoint=h[1], slope_left=h[2], slope_right=h[3], jump=0.0, sse=h[0])
    dev_j = max(abs(j[4] + (j[3] - j[2]) * (v - j[1])) for v in x if v > j[1])
    if b[2] < best and dev_j > tol:
        out.update(kind="jump", breakpoint=j[1], slope_left=j[2], slope_right=j[3], jump=j[4], sse=j[0])
    out["bic"] = b
    return {k: (float(v) if isinstance(v, (float, np.floating)) else v) for k, v in out.items()} | {"bic": [float(v) for v in b]}


rng = np.random.default_rng(1919)
shape_cases = []
xs = np.sort(rng.uniform(0, 10, 20))
for name, y, tol in [
    ("step", 1.0 + 3.0 * (xs > 6.2) + rng.normal(0, 0.1, 20), 0.05),
    ("step on a slope", 0.3 * xs + 2.0 * (xs > 2.9) + rng.normal(0, 0.05, 20), 0.05),
    ("hinge", 1.0 + 0.2 * xs + 1.5 * np.maximum(0, xs - 6.3) + rng.normal(0, 0.05, 20), 0.05),
    ("line", 3.0 - 0.8 * xs + rng.normal(0, 0.02, 20), 0.05),
    ("small bend", 1.0 + 0.2 * xs + 0.01 * np.maximum(0, xs - 6.3), 0.05),
    ("flat", 2.0 + rng.normal(0, 0.01, 20), 0.05),
]:
    c = choose_shape(xs, y, tol)
    c.update(name=name, x=xs.tolist(), y=y.tolist(), tol=tol)
    shape_cases.append(c)
dump(
    "shape.json",
    {"silhouette": sil_cases, "kmeans": km_cases, "kmeans_any": km_hard, "hinge": hinge_cases, "choose": shape_cases},
)

# The gap statistic (Tibshirani, Walther & Hastie 2001, JRSS B 63(2), 411-423; the
# formulas recalled from memory): for fixed data sets and fixed reference data sets drawn
# here uniformly over the box of the data's principal-component scores (numpy SVD; the
# paper's second reference), W(k) = KMeans inertia (n_init=50; W(1) the total sum of
# squares), Gap(k) = mean_b log W*_b(k) - log W(k), s(k) = sd_b(log W*_b(k)) (divisor B)
# x sqrt(1 + 1/B), and the chosen k = the smallest k with Gap(k) >= Gap(k+1) - s(k+1) for
# k < K (K = min(5, n - 1); none: K - 1). forkmap is given the same reference data sets.
def log_w(x, k):
    tot = float(((x - x.mean(axis=0)) ** 2).sum())
    w = tot if k == 1 else float(sk_kmeans(x, k).inertia_)
    return np.log(max(w, 1e-16 * tot))


rng_gap = np.random.default_rng(2001)
gap_cases = []
for name, x in [
    ("three groups", np.vstack([rng_gap.normal(3.0 * np.eye(6)[j], 0.3, (12, 6)) for j in range(3)])),
    ("no groups", rng_gap.uniform(0, 1, (30, 4))),
    ("two close groups", np.vstack([rng_gap.normal(c, 0.8, (20, 5)) for c in (0.0, 1.6)])),
]:
    n = x.shape[0]
    kmax = min(5, n - 1)
    xc = x - x.mean(axis=0)
    scores = xc @ np.linalg.svd(xc, full_matrices=False)[2].T
    lo, hi = scores.min(axis=0), scores.max(axis=0)
    refs = [lo + (hi - lo) * rng_gap.uniform(0, 1, scores.shape) for _ in range(20)]
    own = np.array([log_w(x, k) for k in range(1, kmax + 1)])
    ref = np.array([[log_w(z, k) for k in range(1, kmax + 1)] for z in refs])
    b = len(refs)
    gap = ref.mean(axis=0) - own
    se = ref.std(axis=0) * np.sqrt(1 + 1 / b)
    chosen = next((k for k in range(1, kmax) if gap[k - 1] >= gap[k] - se[k]), kmax - 1)
    gap_cases.append(
        {
            "name": name,
            "x": x.tolist(),
            "reference": [z.tolist() for z in refs],
            "box_widths": sorted((hi - lo).tolist()),
            "log_w": own.tolist(),
            "reference_log_w": ref.tolist(),
            "gap": gap.tolist(),
            "se": se.tolist(),
            "k": int(chosen),
        }
    )
dump("gap.json", {"cases": gap_cases})
print(f"reference values written to {out}")
