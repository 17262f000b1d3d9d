"""A synthetic panel of a given shape for the shape matrix (benches/shape-matrix), and the
forest-heavy config that sweeps it.

Shape: ROWS rows = ROWS/2 units x 2 waves; INDICATORS indicators built from 5 latent
factors (so they are collinear, as open indicators are), 5% of cells missing at random.
The outcome depends on three indicators (one through a threshold) plus noise. Invented
data: it exists only to time and compare sweeps at users' shapes.

Usage: python shape_panel.py ROWS INDICATORS OUT_DIR [--seed S] [--quick] [--grid issue]
Writes OUT_DIR/panel.csv and OUT_DIR/config.toml (--quick: forests of 100 trees only).
--grid issue: instead, the 729-spec forest-heavy grid of issue 22 (fills mean/median/knn;
none, NMF and PCA at k = 2, 3, 5, 8; OLS, ridge, lasso, trees of depth 3 and 5, forests of
100 and 500 trees trying all indicators with min_leaf 1, boosting, nearest neighbours;
three weightings).
"""

import argparse
from pathlib import Path

import numpy as np


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("rows", type=int)
    ap.add_argument("indicators", type=int)
    ap.add_argument("out")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--grid", choices=["shape", "issue"], default="shape")
    a = ap.parse_args()
    rng = np.random.default_rng(a.seed)
    units = a.rows // 2
    n, p = units * 2, a.indicators
    unit_factor = rng.normal(size=(units, 5))
    f = np.repeat(unit_factor, 2, axis=0) + 0.3 * rng.normal(size=(n, 5))
    load = rng.normal(size=(5, p))
    x = f @ load + rng.normal(size=(n, p))
    y = 2.0 * x[:, 0] - 1.5 * x[:, 1 % p] + 3.0 * (x[:, 2 % p] > 0.5) + rng.normal(scale=2.0, size=n)
    x[rng.random(size=(n, p)) < 0.05] = np.nan
    out = Path(a.out)
    out.mkdir(parents=True, exist_ok=True)
    with open(out / "panel.csv", "w") as fh:
        fh.write("unit,wave,outcome," + ",".join(f"x{j:03d}" for j in range(p)) + "\n")
        for i in range(n):
            cells = ["" if np.isnan(v) else f"{v:.6g}" for v in x[i]]
            fh.write(f"u{i // 2:04d},{2020 + i % 2},{y[i]:.6g}," + ",".join(cells) + "\n")
    trees = "[100]" if a.quick else "[100, 500]"
    if a.grid == "issue":
        (out / "config.toml").write_text(ISSUE_GRID.format(n=n, units=units, p=p))
        return
    (out / "config.toml").write_text(f"""# Shape matrix: {n} rows ({units} units x 2 waves), {p} indicators (benches/shape-matrix).
seed = 7

[data]
file = "panel.csv"
unit = "unit"
wave = "wave"
outcome = "outcome"

[folds]
k = 5
repeats = 1

[choices]
fill = ["median"]
pool = ["all"]
scale = ["standardise"]
compress = ["none"]
model = ["ridge", "forest", "boost"]
weighting = ["rows"]

[grid.ridge]
alpha = [1]

[grid.forest]
trees = {trees}
tried = [1.0, 0.33]
min_leaf = [1, 5]

[grid.boost]
trees = [100]
depth = [3]

[importance]
kinds = []
""")


ISSUE_GRID = """# Issue 22's forest-heavy grid: {n} rows ({units} units x 2 waves), {p} indicators.
seed = 7

[data]
file = "panel.csv"
unit = "unit"
wave = "wave"
outcome = "outcome"

[folds]
k = 5
repeats = 1

[choices]
fill = ["mean", "median", "knn"]
pool = ["all"]
scale = ["minmax"]
compress = ["none", "pca", "nmf"]
model = ["ols", "ridge", "lasso", "tree", "forest", "boost", "nearest"]
weighting = ["rows", "units", "high"]

[grid.pca]
k = [2, 3, 5, 8]

[grid.nmf]
k = [2, 3, 5, 8]

[grid.tree]
depth = [3, 5]

[grid.forest]
trees = [100, 500]
tried = [1.0]
min_leaf = [1]

[importance]
kinds = []
"""


if __name__ == "__main__":
    main()
