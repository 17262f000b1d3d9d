"""Two forkmap binaries side by side on the shape matrix's panels, forkmap alone: for
measuring a speed lever before and after in one sitting (benches/MEASUREMENTS.md).

Panels (benches/shape_panel.py): the --quick shapes (rows 120 and 400 by indicators 10
and 30) with the full forest grid (100 and 500 trees, tried 1.0 and 0.33, min_leaf 1 and
5, ridge, boosting), and issue 22's 729-spec grid at 400 rows x 20 indicators. Each
binary runs each panel RUNS times, alternating A, B, A, B, ... (so drifts of a shared
machine hit both alike); prints the median wall seconds of each and their ratio.

Usage: python benches/shape_ab.py BIN_A BIN_B [--threads 2] [--runs 3] [--only NAME ...]
(from the repository root; NAMEs: r120-p10 r120-p30 r400-p10 r400-p30 issue-r400-p20)
"""

import argparse
import statistics
import subprocess
import sys
import time
from pathlib import Path

PANELS = [
    ("r120-p10", ["120", "10"]),
    ("r120-p30", ["120", "30"]),
    ("r400-p10", ["400", "10"]),
    ("r400-p30", ["400", "30"]),
    ("issue-r400-p20", ["400", "20", "--grid", "issue"]),
]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("a")
    ap.add_argument("b")
    ap.add_argument("--threads", default="2")
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--only", nargs="*")
    ap.add_argument("--work", default="target/shape-ab")
    a = ap.parse_args()
    work = Path(a.work)
    print("| panel | A median (s) | B median (s) | A / B | runs (A/B) |")
    print("| --- | --- | --- | --- | --- |")
    for name, args in PANELS:
        if a.only and name not in a.only:
            continue
        d = work / name
        subprocess.run([sys.executable, "benches/shape_panel.py", *args, str(d)], check=True)
        times = {"a": [], "b": []}
        for _ in range(a.runs):
            for which in ("a", "b"):
                out = d / f"out-{which}"
                t0 = time.perf_counter()
                subprocess.run(
                    [getattr(a, which), "run", str(d / "config.toml"), "--out", str(out),
                     "--threads", a.threads, "--quiet", "--no-map", "--restart"],
                    check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                )
                times[which].append(time.perf_counter() - t0)
        ta, tb = statistics.median(times["a"]), statistics.median(times["b"])
        spread = ", ".join(f"{x:.1f}/{y:.1f}" for x, y in zip(times["a"], times["b"]))
        print(f"| {name} | {ta:.2f} | {tb:.2f} | {ta / tb:.2f}x | {spread} |",
              flush=True)


if __name__ == "__main__":
    main()
