"""Compare two forkmap run directories table by table: the same rows, bit for bit, once
sorted (columns ending in `seconds`, wall-clock timings, are left out; columns are
matched by name, a column a part lacks read as null). Exit 1 on any
difference. Usage: python same_results.py RUN_A RUN_B"""

import sys
from pathlib import Path

import pyarrow.parquet as pq

TABLES = ["specs", "predictions", "loadings", "importance"]


def rows(run: Path, table: str, names: list):
    """Rows as text over `names`, by column name: a column a part lacks is null there (the
    specs parts of an extended run carry the parameter columns of their own config)."""
    out = []
    for f in sorted((run / table).glob("part-*.parquet")):
        t = pq.read_table(f)
        n = t.num_rows
        cols = [t.column(c).to_pylist() if c in t.column_names else [None] * n for c in names]
        for r in zip(*cols):
            # repr of a float is exact (shortest round-trip), so equal text = equal bits.
            out.append("|".join(repr(v) for v in r))
    out.sort()
    return out


def columns(runs, table: str) -> list:
    names = set()
    for run in runs:
        for f in (run / table).glob("part-*.parquet"):
            names.update(pq.read_schema(f).names)
    return sorted(c for c in names if not c.endswith("seconds"))


def main() -> int:
    a, b = Path(sys.argv[1]), Path(sys.argv[2])
    bad = 0
    for t in TABLES:
        names = columns([a, b], t)
        ra, rb = rows(a, t, names), rows(b, t, names)
        if ra != rb:
            only_a = len(set(ra) - set(rb))
            only_b = len(set(rb) - set(ra))
            print(f"{t}: {len(ra)} vs {len(rb)} rows; {only_a} only in {a}, {only_b} only in {b}")
            bad += 1
        elif not ra and t == "specs":
            print(f"{t}: no rows in either run")
            bad += 1
        else:
            print(f"{t}: {len(ra)} rows identical")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
