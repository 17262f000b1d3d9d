"""The bound on a forest-heavy grid's ratio: scikit-learn's own cost per forest tree (its
tree builder in C, no per-spec Python work) against forkmap's, at the shape matrix's
training-row counts, indicators and forest settings.

scikit-learn: RandomForestRegressor(n_estimators=T, max_features=forkmap's tried count,
min_samples_leaf, bootstrap=True, n_jobs=1).fit on the panel, CPU seconds of the fit
(time.process_time) / T. forkmap: `floor_count wide ROWS P REPEATS TRIED MIN_LEAF` (the
same forest settings, 100 trees a fit), CPU seconds of the child process (user + system)
/ trees grown. Both on the same kind of synthetic panel (uniform values on a 0.001 grid,
outcome 0.3 x0 + sin(x1) + uniform noise, unit weights; different random draws), one
after the other on one core. If forkmap's tree is k times cheaper than scikit-learn's,
a grid whose time is mostly forests cannot run much more than k times faster than the
Python sweep, whatever the Python sweep spends per spec.

Usage: python benches/tree_bound.py FLOOR_COUNT_BIN [--rows 96 320 960] [--p 10 30 100 300]
         [--tried 1.0 0.33] [--min-leaf 1 5] [--budget CPU_SECONDS]
  (FLOOR_COUNT_BIN: `cargo bench -p forkmap --bench floor_count --no-run` prints its path)
"""

import argparse
import os
import resource
import subprocess
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")

import numpy as np  # noqa: E402
from sklearn.ensemble import RandomForestRegressor  # noqa: E402


def tried_count(share, p):
    # forkmap's models::forest::tried_count: share x p rounded, at least one.
    return min(max(int(round(share * p)), 1), p)


def panel(n, p, seed=1):
    g = np.random.default_rng(seed)
    x = np.round(g.uniform(0, 100, size=(n, p)) * 1000) / 1000
    y = 0.3 * x[:, 0] + np.sin(x[:, 1 % p]) + g.uniform(0, 5, size=n)
    return x, y


def sklearn_ms(x, y, tried, leaf, budget):
    """CPU ms per tree of scikit-learn's forest, trees enough for about `budget` s."""
    trees = 10
    while True:
        rf = RandomForestRegressor(
            n_estimators=trees,
            max_features=tried_count(tried, x.shape[1]),
            min_samples_leaf=leaf,
            bootstrap=True,
            n_jobs=1,
            random_state=0,
        )
        t = time.process_time()
        rf.fit(x, y)
        s = time.process_time() - t
        if s >= budget or trees >= 500:
            return s / trees * 1e3
        trees = min(500, max(trees * 2, int(trees * budget / max(s, 1e-3)) + 1))


def forkmap_ms(binary, n, p, tried, leaf, budget):
    """CPU ms per tree of forkmap's forest (100-tree fits, enough for about `budget` s)."""
    def run(reps):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        out = subprocess.run(
            [binary, "wide", str(n), str(p), str(reps), str(tried), str(leaf)],
            check=True, capture_output=True, text=True,
        ).stdout
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
        return cpu, out
    reps = 1
    while True:
        cpu, _ = run(reps)
        if cpu >= budget or reps >= 50:
            return cpu / (reps * 100) * 1e3
        reps = min(50, max(reps * 2, int(reps * budget / max(cpu, 1e-3)) + 1))


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("binary")
    ap.add_argument("--rows", type=int, nargs="*", default=[96, 320, 960])
    ap.add_argument("--p", type=int, nargs="*", default=[10, 30, 100, 300])
    ap.add_argument("--tried", type=float, nargs="*", default=[1.0, 0.33])
    ap.add_argument("--min-leaf", type=int, nargs="*", default=[1, 5])
    ap.add_argument("--budget", type=float, default=1.0, help="CPU seconds per measurement")
    a = ap.parse_args()
    print("| training rows | indicators | tried | min_leaf | scikit-learn ms/tree | forkmap ms/tree | k |")
    print("| --- | --- | --- | --- | --- | --- | --- |")
    for n in a.rows:
        for p in a.p:
            x, y = panel(n, p)
            for tried in a.tried:
                for leaf in a.min_leaf:
                    s = sklearn_ms(x, y, tried, leaf, a.budget)
                    f = forkmap_ms(a.binary, n, p, tried, leaf, a.budget)
                    print(f"| {n} | {p} | {tried} | {leaf} | {s:.3f} | {f:.3f} | {s / f:.1f}x |",
                          flush=True)


if __name__ == "__main__":
    main()
