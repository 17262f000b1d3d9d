"""Fingerprint of forkmap run directories: per result table, the row count and the sha256
of its rows sorted (the rows exactly as `same_results.py` compares them: every column but
the wall-clock `...seconds` ones, floats by their exact repr). Equal fingerprints mean
bit-identical tables. The derived tables count too (every Parquet file under null/,
nested/, refit/, curves/ and report/; a folder of per-draw or per-subsample parts, or the
nested estimate's fold files, as one table), so the analysis layer is held to the same
standard as the sweep.

Usage: python fingerprint.py NAME=RUN_DIR...                  print the fingerprint lines
       python fingerprint.py --check FILE NAME=RUN_DIR...      compare with FILE, exit 1 on a difference
       python fingerprint.py --write FILE NAME=RUN_DIR...      (re)write FILE
A line reads `NAME TABLE ROWS SHA256`; lines starting with # are comments."""

import hashlib
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
import pyarrow.parquet as pq  # noqa: E402
from same_results import TABLES, rows  # noqa: E402

HEADER = """\
# Result fingerprints of the ready configs, made by tests/fingerprint (see DEVELOPERS.md,
# "Results that must not move"): NAME TABLE ROWS SHA256 over the table's rows sorted,
# seconds columns left out. A change that moves results on purpose regenerates this file
# with `tests/fingerprint --update` and says in its commit message which results move and why.
"""


def ordered_columns(run: Path, table: str) -> list:
    """The columns in the order the parts hold them (seconds columns left out); a column
    only later parts hold (an extended run's new parameters) comes after."""
    names = []
    for f in sorted((run / table).glob("part-*.parquet")):
        for c in pq.read_schema(f).names:
            if c not in names and not c.endswith("seconds"):
                names.append(c)
    return names


DERIVED = ["null", "nested", "refit", "curves", "report"]


def derived_tables(run: Path) -> dict:
    """Derived table name -> its Parquet files: `DIR/NAME` for `DIR/NAME.parquet`, the
    folder for a folder of parts (`null/draws`), `nested/fold` for the fold files."""
    groups = {}
    for d in DERIVED:
        base = run / d
        if not base.is_dir():
            continue
        for f in sorted(base.rglob("*.parquet")):
            rel = f.relative_to(run)
            if len(rel.parts) > 2:
                key = "/".join(rel.parts[:-1])
            elif rel.name.startswith("fold-"):
                key = f"{d}/fold"
            else:
                key = str(rel.with_suffix(""))
            groups.setdefault(key, []).append(f)
    return groups


def derived_rows(files: list) -> list:
    out = []
    for f in files:
        t = pq.read_table(f)
        names = [c for c in t.column_names if not c.endswith("seconds")]
        cols = [t.column(c).to_pylist() for c in names]
        for r in zip(*cols):
            out.append("|".join(f"{c}={v!r}" for c, v in zip(names, r)))
    out.sort()
    return out


def line(name: str, table: str, rs: list) -> str:
    h = hashlib.sha256()
    for r in rs:
        h.update(r.encode())
        h.update(b"\n")
    return f"{name} {table} {len(rs)} {h.hexdigest()}"


def fingerprint(name: str, run: Path) -> list:
    out = [line(name, t, rows(run, t, ordered_columns(run, t))) for t in TABLES]
    for t, files in sorted(derived_tables(run).items()):
        out.append(line(name, t, derived_rows(files)))
    return out


def read(path: Path) -> list:
    return [
        line.strip()
        for line in path.read_text().splitlines()
        if line.strip() and not line.startswith("#")
    ]


def main(argv: list) -> int:
    mode, file = None, None
    if argv and argv[0] in ("--check", "--write"):
        mode, file, argv = argv[0], Path(argv[1]), argv[2:]
    if not argv:
        print(__doc__)
        return 2
    lines = []
    for arg in argv:
        name, _, run = arg.partition("=")
        lines += fingerprint(name, Path(run))
    if mode is None:
        print("\n".join(lines))
        return 0
    if mode == "--write":
        file.write_text(HEADER + "\n".join(lines) + "\n")
        print(f"fingerprint: wrote {file}")
        return 0
    want = {" ".join(w.split()[:2]): w for w in read(file)}
    bad = 0
    for got in lines:
        key = " ".join(got.split()[:2])
        if want.get(key) != got:
            bad += 1
            print(f"fingerprint: {key} differs: now {' '.join(got.split()[2:])}, "
                  f"committed {' '.join(want.get(key, 'none').split()[2:]) or 'none'}")
        else:
            print(f"fingerprint: {key}: {got.split()[2]} rows identical")
    names = {a.partition("=")[0] for a in argv}
    now = {" ".join(g.split()[:2]) for g in lines}
    for key in sorted(want):
        if key.split()[0] in names and key not in now:
            bad += 1
            print(f"fingerprint: {key} is committed but the run has no such table")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
