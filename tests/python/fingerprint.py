"""Fingerprint of forkmap run directories: per result table, the row count and the sha256
of its rows sorted (the rows exactly as `same_results.py` compares them: every column but
the wall-clock `...seconds` ones, floats by their exact repr). Equal fingerprints mean
bit-identical tables.

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


def fingerprint(name: str, run: Path) -> list:
    out = []
    for t in TABLES:
        rs = rows(run, t, ordered_columns(run, t))
        h = hashlib.sha256()
        for r in rs:
            h.update(r.encode())
            h.update(b"\n")
        out.append(f"{name} {t} {len(rs)} {h.hexdigest()}")
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
    want = {" ".join(l.split()[:2]): l for l in read(file)}
    bad = 0
    for line in lines:
        key = " ".join(line.split()[:2])
        if want.get(key) != line:
            bad += 1
            print(f"fingerprint: {key} differs: now {' '.join(line.split()[2:])}, "
                  f"committed {' '.join(want.get(key, 'none').split()[2:]) or 'none'}")
        else:
            print(f"fingerprint: {key}: {line.split()[2]} rows identical")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
