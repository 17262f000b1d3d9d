"""Scaling table: forkmap's wall time as the work grows along one axis at a time (specs,
rows, indicators, folds, threads), from the side-by-side grid (benches/side-by-side.toml).
Each cell is the median of REPS runs; the ratio is against the axis's first value.

Rows grow by stacking copies of the toy panel under new unit names with a small seeded
jitter (so copies are not duplicates); indicators shrink to a subset that keeps the `core`
pool's members. Writes target/scaling/table.md and prints it.

Usage: python benches/scaling.py [REPS]   (run by benches/scaling)
"""

import re
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parent.parent
BIN = ROOT / "target" / "release" / "forkmap"
WORK = ROOT / "target" / "scaling"
BASE = (ROOT / "benches" / "side-by-side.toml").read_text()
PANEL = ROOT / "toy-panel" / "panel.csv"
REPS = int(sys.argv[1]) if len(sys.argv) > 1 else 3


def config(name, text):
    path = WORK / f"{name}.toml"
    path.write_text(text.replace('"../toy-panel/panel.csv"', f'"{PANEL}"'))
    return path


def timed(cfg, threads=2):
    times = []
    for r in range(REPS):
        out = WORK / "run"
        subprocess.run(["rm", "-rf", str(out)], check=True)
        t0 = time.perf_counter()
        subprocess.run([str(BIN), "run", str(cfg), "--out", str(out), "--threads", str(threads), "--quiet"],
                       check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def stacked(copies):
    df = pd.read_csv(PANEL, dtype={"district": str, "wave": str})
    rng = np.random.default_rng(copies)
    parts = []
    ind = [c for c in df.columns if c not in ("district", "wave", "region", "hardship_pct")]
    for c in range(copies):
        d = df.copy()
        if c:
            d["district"] = d["district"] + f"-{c}"
            d[ind] = d[ind] * (1 + 0.01 * rng.standard_normal(d[ind].shape))
        parts.append(d)
    path = WORK / f"panel-x{copies}.csv"
    pd.concat(parts).to_csv(path, index=False)
    return path


def main():
    WORK.mkdir(parents=True, exist_ok=True)
    rows = []
    base = config("base", BASE)
    n_specs = 264

    def axis(name, values, make, threads=lambda v: 2):
        first = None
        for v in values:
            t = timed(make(v), threads(v))
            first = first or t
            rows.append((name, v, t, t / first))
            print(f"{name:<11} {v!s:>6}: {t:6.2f} s  ({t / first:.2f}x)", file=sys.stderr)

    axis("threads", [1, 2], lambda v: base, threads=lambda v: v)
    axis("specs", [66, 132, 264],
         lambda v: config(f"specs{v}", BASE + f"\n[sample]\nspecs = {v}\n") if v < n_specs else base)
    axis("rows", [121, 242, 484],
         lambda v: config(f"rows{v}", BASE.replace('"../toy-panel/panel.csv"', f'"{stacked(v // 121)}"')))
    cols = [c for c in pd.read_csv(PANEL, nrows=1).columns if c not in ("district", "wave", "region", "hardship_pct")]
    core = re.search(r"core = \[(.*?)\]", BASE, re.S).group(1)
    core = [c.strip().strip('"') for c in core.split(",") if c.strip()]
    def subset(k):
        keep = core + [c for c in cols if c not in core][: k - len(core)]
        return config(f"ind{k}", BASE.replace('ignore = ["region"]',
                      'ignore = ["region"]\nindicators = [' + ", ".join(f'"{c}"' for c in keep) + "]"))
    axis("indicators", [30, 60, 90], lambda v: subset(v) if v < len(cols) else base)
    axis("folds (k)", [3, 5, 10], lambda v: config(f"k{v}", BASE.replace("k = 5\nrepeats = 2", f"k = {v}\nrepeats = 2")))

    lines = ["| grows | value | wall time (s) | vs first |", "| --- | --- | --- | --- |"]
    for name, v, t, r in rows:
        lines.append(f"| {name} | {v} | {t:.2f} | {r:.2f}x |")
    text = "\n".join(lines)
    (WORK / "table.md").write_text(text + "\n")
    print(text)


if __name__ == "__main__":
    main()
