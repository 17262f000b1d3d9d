"""Two forkmap binaries side by side on the shape matrix's panels, forkmap alone: for
measuring a speed lever before and after in one sitting (benches/MEASUREMENTS.md).

Panels (benches/shape_panel.py): the --quick shapes (rows 120 and 400 by indicators 10
and 30) with the full forest grid (100 and 500 trees, tried 1.0 and 0.33, min_leaf 1 and
5, ridge, boosting), and issue 22's 729-spec grid at 400 rows x 20 indicators. Each
binary runs each panel RUNS times, alternating A, B, A, B, ... (so drifts of a shared
machine hit both alike); prints the median CPU seconds (user + system, of the run and its
threads) and wall seconds of each and their ratios. On a machine shared with other jobs
the CPU seconds move less than the wall seconds; quote the CPU ratio there.

Usage: python benches/shape_ab.py BIN_A BIN_B [--threads 2] [--runs 3] [--only NAME ...]
(from the repository root; NAMEs: r120-p10 r120-p30 r400-p10 r400-p30 issue-r400-p20)
"""

import argparse
import resource
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
    print("| panel | CPU A (s) | CPU B (s) | A / B | wall A (s) | wall B (s) | A / B | CPU runs (A/B) |")
    print("| --- | --- | --- | --- | --- | --- | --- | --- |")
    for name, args in PANELS:
        if a.only and name not in a.only:
            continue
        d = work / name
        subprocess.run([sys.executable, "benches/shape_panel.py", *args, str(d)], check=True)
        times = {"a": [], "b": []}
        cpu = {"a": [], "b": []}
        for _ in range(a.runs):
            for which in ("a", "b"):
                out = d / f"out-{which}"
                t0 = time.perf_counter()
                r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
                subprocess.run(
                    [getattr(a, which), "run", str(d / "config.toml"), "--out", str(out),
                     "--threads", a.threads, "--quiet", "--no-map", "--restart"],
                    check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                )
                times[which].append(time.perf_counter() - t0)
                r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
                cpu[which].append(r1.ru_utime + r1.ru_stime - r0.ru_utime - r0.ru_stime)
        ta, tb = statistics.median(times["a"]), statistics.median(times["b"])
        ca, cb = statistics.median(cpu["a"]), statistics.median(cpu["b"])
        spread = ", ".join(f"{x:.1f}/{y:.1f}" for x, y in zip(cpu["a"], cpu["b"]))
        print(f"| {name} | {ca:.2f} | {cb:.2f} | {ca / cb:.2f}x | {ta:.2f} | {tb:.2f} | "
              f"{ta / tb:.2f}x | {spread} |", flush=True)


if __name__ == "__main__":
    main()
