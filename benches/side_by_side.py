"""The obvious Python sweep, for the side-by-side benchmark (benches/side-by-side).

It reads the same forkmap config (only the options used by benches/side-by-side.toml have
an equivalent here; anything else is refused), builds every spec as a scikit-learn
Pipeline (fill -> scale -> compress -> model, on the pool's columns), cross-validates it
with `cross_val_predict` on the same grouped folds forkmap used (read from a forkmap run's
predictions table, so both fit exactly the same rows), and spreads the specs over cores
with joblib. It writes one row per spec with forkmap's option and parameter column names
and the out-of-fold MAE, RMSE and R2 over all repeats (forkmap's definitions).

Usage: python side_by_side.py CONFIG FORKMAP_RUN_DIR OUT.parquet --jobs 2
"""

import argparse
import itertools
import sys
import time
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
from joblib import Parallel, delayed
from sklearn.decomposition import PCA
from sklearn.ensemble import GradientBoostingRegressor, RandomForestRegressor
from sklearn.impute import SimpleImputer
from sklearn.linear_model import Lasso, LinearRegression, Ridge
from sklearn.model_selection import cross_val_predict
from sklearn.neighbors import KNeighborsRegressor
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import MinMaxScaler, StandardScaler
from sklearn.tree import DecisionTreeRegressor

# forkmap's defaults for the parameters a grid may leave out (engine/src/fit/models/*.rs).
DEFAULTS = {
    "pca": {"k": 3},
    "ridge": {"alpha": 1.0},
    "lasso": {"alpha": 1.0},
    "tree": {"depth": 4, "min_leaf": 5},
    "nearest": {"k": 5},
    "forest": {"trees": 200, "tried": 0.33, "min_leaf": 5},
    "boost": {"trees": 100, "rate": 0.1, "depth": 3, "subsample": 1.0, "min_leaf": 5},
    "ols": {},
}
SUPPORTED = {
    "transform": {"identity"},
    "fill": {"mean", "median"},
    "scale": {"standardise", "minmax", "none"},
    "compress": {"none", "pca"},
    "model": set(DEFAULTS) - {"pca"},
    "weighting": {"rows"},
}


def expand(option, grids):
    params = dict(DEFAULTS.get(option, {}))
    grid = grids.get(option, {})
    names = sorted(grid)
    out = []
    for values in itertools.product(*(grid[n] for n in names)):
        p = dict(params)
        p.update(dict(zip(names, values)))
        out.append(p)
    return out or [params]


def model(option, p, n_cols, seed):
    if option == "ols":
        return LinearRegression()
    if option == "ridge":
        return Ridge(alpha=p["alpha"])
    if option == "lasso":
        # forkmap's coordinate descent runs to a tight tolerance; so does this.
        return Lasso(alpha=p["alpha"], tol=1e-12, max_iter=1_000_000)
    if option == "tree":
        return DecisionTreeRegressor(max_depth=int(p["depth"]), min_samples_leaf=int(p["min_leaf"]), random_state=seed)
    if option == "nearest":
        return KNeighborsRegressor(n_neighbors=int(p["k"]))
    if option == "forest":
        tried = min(max(round(p["tried"] * n_cols), 1), n_cols)  # forkmap's count
        return RandomForestRegressor(n_estimators=int(p["trees"]), max_features=tried,
                                     min_samples_leaf=int(p["min_leaf"]), random_state=seed, n_jobs=1)
    if option == "boost":
        return GradientBoostingRegressor(n_estimators=int(p["trees"]), learning_rate=p["rate"],
                                         max_depth=int(p["depth"]), subsample=p["subsample"],
                                         min_samples_leaf=int(p["min_leaf"]), random_state=seed)
    raise SystemExit(f"side_by_side.py: model {option} has no equivalent here")


def run_spec(spec, X, y, splits, seed):
    """Cross-validated predictions of one spec over every repeat; returns its row."""
    t0 = time.perf_counter()
    cols = spec["columns"]
    Xs = X[:, cols]
    k = spec["compress_params"].get("k")
    n_model_cols = len(cols) if spec["compress"] == "none" else int(k)
    steps = [("fill", SimpleImputer(strategy=spec["fill"]))]
    if spec["scale"] == "standardise":
        steps.append(("scale", StandardScaler()))
    elif spec["scale"] == "minmax":
        steps.append(("scale", MinMaxScaler()))
    if spec["compress"] == "pca":
        steps.append(("compress", PCA(n_components=int(k))))
    steps.append(("model", model(spec["model"], spec["model_params"], n_model_cols, seed)))
    obs, pred = [], []
    for cv in splits:
        p = cross_val_predict(Pipeline(steps), Xs, y, cv=cv)
        obs.append(y)
        pred.append(p)
    obs, pred = np.concatenate(obs), np.concatenate(pred)
    err = obs - pred
    row = {d: spec[d] for d in ("fill", "pool", "scale", "compress", "model")}
    for name, v in spec["compress_params"].items():
        row[f"{spec['compress']}_{name}"] = float(v)
    for name, v in spec["model_params"].items():
        row[f"{spec['model']}_{name}"] = float(v)
    row["mae"] = float(np.mean(np.abs(err)))
    row["rmse"] = float(np.sqrt(np.mean(err * err)))
    row["r2"] = float(1 - np.sum(err * err) / np.sum((obs - obs.mean()) ** 2))
    row["seconds"] = time.perf_counter() - t0
    return row


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("config")
    ap.add_argument("forkmap_run")
    ap.add_argument("out")
    ap.add_argument("--jobs", type=int, default=2)
    a = ap.parse_args()
    cfg_path = Path(a.config)
    cfg = tomllib.loads(cfg_path.read_text())
    d = cfg["data"]
    data = pd.read_csv(cfg_path.parent / d["file"], dtype={d["unit"]: str, d.get("wave", ""): str})
    skip = {d["unit"], d["outcome"], d.get("wave", "")} | set(d.get("ignore", []))
    indicators = [c for c in data.columns if c not in skip]
    X = data[indicators].to_numpy(dtype=float)
    y = data[d["outcome"]].to_numpy(dtype=float)
    choices = cfg.get("choices", {})
    for dim, allowed in SUPPORTED.items():
        for o in choices.get(dim, []):
            if o not in allowed:
                raise SystemExit(f"side_by_side.py: choices.{dim} = {o} has no equivalent here")
    grids = cfg.get("grid", {})
    pools = {"all": list(range(len(indicators)))}
    for name, members in cfg.get("pools", {}).items():
        pools[name] = sorted(indicators.index(m) for m in members)

    # The folds forkmap used: (unit, wave) -> fold, per repeat, from one spec's predictions.
    preds = pq.read_table(Path(a.forkmap_run) / "predictions").to_pandas()
    first = preds[preds.spec_id == preds.spec_id.iloc[0]]
    key = list(zip(data[d["unit"]], data[d["wave"]].astype(str) if "wave" in d else [None] * len(data)))
    splits = []
    for r in sorted(first["repeat"].unique()):
        f = first[first["repeat"] == r]
        fold_of = dict(zip(zip(f["unit"], f["wave"]), f["fold"]))
        folds = np.array([fold_of[k] for k in key])
        splits.append([(np.where(folds != j)[0], np.where(folds == j)[0]) for j in sorted(set(folds))])

    specs = []
    for fill, pool, scale, comp, mdl in itertools.product(
        choices.get("fill", ["median"]), choices.get("pool", ["all"]), choices.get("scale", ["standardise"]),
        choices.get("compress", ["none"]), choices.get("model", ["ridge"]),
    ):
        for cp in (expand(comp, grids) if comp != "none" else [{}]):
            for mp in expand(mdl, grids):
                specs.append({"fill": fill, "pool": pool, "scale": scale, "compress": comp,
                              "compress_params": cp, "model": mdl, "model_params": mp,
                              "columns": pools[pool]})
    t0 = time.perf_counter()
    rows = Parallel(n_jobs=a.jobs)(delayed(run_spec)(s, X, y, splits, 0) for s in specs)
    wall = time.perf_counter() - t0
    # Rows differ in their parameter columns: take the union (missing = null).
    pq.write_table(pa.Table.from_pandas(pd.DataFrame(rows), preserve_index=False), a.out)
    print(f"python: {len(rows)} specs x {sum(len(s) for s in splits)} fits in {wall:.1f} s on {a.jobs} jobs",
          file=sys.stderr)


if __name__ == "__main__":
    main()
