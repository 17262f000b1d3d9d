"""The engine's module graph at the level of its modules (`engine/src/FOLDER/X.rs` or
`engine/src/FOLDER/X/`; `starter/` and the binary's `cli/` stand alone), read from every
`crate::X` and `crate::FOLDER::X` path in the source (use lines and paths in code alike;
comments and doc comments are left out), its cycles, and its folder order.

Usage: python3 tests/python/module_graph.py [--edges]
Prints each strongly connected component with more than one module (a set of modules that
import each other in a circle), then one shortest cycle through each, and every edge from a
module to one in a later folder of FOLDERS (the folders show the flow, bottom first); exits
1 when there is any of either. `--edges` also prints every edge `A -> B` (A names B)."""

import re
import sys
from collections import defaultdict, deque
from pathlib import Path

SRC = Path(__file__).resolve().parents[2] / "engine" / "src"


# Folders in the order data flows, bottom first: a module imports only from its own folder
# or from folders before it. `starter` and `cli` are modules that stand alone on top.
FOLDERS = ["base", "intake", "fit", "choices", "sweep", "store", "derived", "runs",
           "starter", "cli"]
# Folders that are a module themselves (their mod.rs); other files in them are modules.
SELF_MODULES = {"sweep", "starter", "cli"}


def top_module(path: Path) -> str:
    parts = path.relative_to(SRC).parts
    head = parts[0].removesuffix(".rs")
    if head in FOLDERS and len(parts) > 1:
        sub = parts[1].removesuffix(".rs")
        if head in SELF_MODULES and sub != "importance":
            return head
        return "mod" if sub == "mod" else sub
    return head


def folder_of(path: Path) -> str:
    return path.relative_to(SRC).parts[0].removesuffix(".rs")


def strip_comments(text: str) -> str:
    text = re.sub(r"/\*.*?\*/", "", text, flags=re.S)
    return "\n".join(line.split("//", 1)[0] for line in text.splitlines())


FOLDER = {}


def edges() -> dict:
    modules = {top_module(p) for p in SRC.rglob("*.rs")} - {"lib", "main", "mod"}
    for p in SRC.rglob("*.rs"):
        FOLDER.setdefault(top_module(p), folder_of(p))
    g = defaultdict(set)
    for p in sorted(SRC.rglob("*.rs")):
        a = top_module(p)
        if a in ("lib", "main", "mod"):
            continue
        code = strip_comments(p.read_text())
        names = set(re.findall(r"\bcrate::(\w+)", code))
        names |= set(re.findall(r"\bcrate::(?:%s)::(\w+)" % "|".join(FOLDERS), code))
        # `use crate::{a, b::c}` groups
        for group in re.findall(r"\bcrate::\{([^}]*)\}", code):
            names |= set(re.findall(r"(?:^|,)\s*(\w+)", group))
        # `forkmap::X` from the binary's cli/ counts as the cli module's edge
        names |= set(re.findall(r"\bforkmap::(\w+)", code))
        for b in names:
            if b in modules and b != a:
                g[a].add(b)
    for m in modules:
        g.setdefault(m, set())
    return g


def sccs(g: dict) -> list:
    index, low, on, stack, out, counter = {}, {}, set(), [], [], [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in sorted(g[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            out.append(sorted(comp))

    sys.setrecursionlimit(10000)
    for v in sorted(g):
        if v not in index:
            visit(v)
    return [c for c in out if len(c) > 1]


def shortest_cycle(g: dict, start: str, allowed: set) -> list:
    prev = {start: None}
    q = deque([start])
    while q:
        v = q.popleft()
        for w in sorted(g[v] & allowed):
            if w == start:
                path = [v]
                while prev[path[-1]] is not None:
                    path.append(prev[path[-1]])
                return list(reversed(path)) + [start]
            if w not in prev:
                prev[w] = v
                q.append(w)
    return []


def main() -> int:
    g = edges()
    if "--edges" in sys.argv:
        for a in sorted(g):
            for b in sorted(g[a]):
                print(f"{a} -> {b}")
    comps = sccs(g)
    rank = {f: i for i, f in enumerate(FOLDERS)}
    upward = [(a, b) for a in sorted(g) for b in sorted(g[a])
              if rank.get(FOLDER.get(b), -1) > rank.get(FOLDER.get(a), len(FOLDERS))]
    for a, b in upward:
        print(f"edge to a later folder: {a} ({FOLDER[a]}/) -> {b} ({FOLDER[b]}/)")
    if not comps and not upward:
        print("module graph: no cycle, every edge to its own or an earlier folder")
        return 0
    for c in comps:
        print("modules in a circle: " + ", ".join(c))
        seen = set()
        for m in c:
            cyc = shortest_cycle(g, m, set(c))
            key = frozenset(cyc)
            if cyc and key not in seen:
                seen.add(key)
                print("  " + " -> ".join(cyc))
    return 1 if comps or upward else 0


if __name__ == "__main__":
    sys.exit(main())
