"""Helpers of toy-panel/recovery (see there).

  recovery.py config BASE_CONFIG PANEL_DIR
      print BASE_CONFIG pointed at PANEL_DIR's panel.csv and codebook.csv, without its
      [nested] section (the truth criteria do not read the nested estimate), with the
      first NOISE_IN_POOL pure-noise indicators of PANEL_DIR/truth.json added to each
      hand-picked pool.
  recovery.py summarise OUT_DIR --units N... --seeds S...
      apply tests/python/check_truth.py's criteria to OUT_DIR/units-N-seed-S/run and write
      OUT_DIR/recovery.md, recovery.svg and recovery.json.
"""

import json
import re
from xml.sax.saxutils import escape
import os
import statistics
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests", "python"))
import check_truth  # noqa: E402  (the same criteria as the demo's truth check)


# Pure-noise indicators added to each hand-picked pool: the recovery config's `core` pool
# holds one or two indicators of each codebook group, so it gets two of the noise group too
# (the `all` pool holds every indicator already). Without them the pool could never name a
# noise indicator and the noise criterion would be met by construction in half the specs.
NOISE_IN_POOL = 2


def config(base, panel):
    panel = os.path.abspath(panel)
    truth = json.load(open(os.path.join(panel, "truth.json")))
    noise = truth.get("noise_indicators", [])[:NOISE_IN_POOL]
    out, skip, section, in_pool = [], False, None, False
    for line in open(base):
        s = line.strip()
        if s.startswith("["):
            skip = s == "[nested]"
            section = s
        if skip:
            continue
        if s.startswith("file ="):
            line = f'file = "{panel}/panel.csv"\n'
        elif s.startswith("codebook ="):
            line = f'codebook = "{panel}/codebook.csv"\n'
        elif section == "[pools]" and re.match(r"[A-Za-z0-9_]+\s*=\s*\[", s):
            in_pool = True
        if in_pool and noise and s.endswith("]"):
            # The pool list's closing bracket: the noise names go in before it, after a
            # comma unless the list so far ends in one (or is empty).
            body = line.rstrip("\n")
            head, tail = body[: body.rindex("]")].rstrip(), body[body.rindex("]") :]
            before = (head or (out[-1].strip() if out else "")).rstrip()
            sep = "" if before.endswith(("[", ",")) or not before else ","
            names = ", ".join(f'"{n}"' for n in noise)
            line = f"{head}{sep} {names}{tail}\n" if head else f"  {names}{tail}\n"
            if not head and sep:
                out[-1] = out[-1].rstrip("\n") + ",\n"
        if in_pool and s.endswith("]"):
            in_pool = False
        out.append(line)
    sys.stdout.write("".join(out))


NOISE = "no noise indicator in supported conclusions"
CRITERIA = [
    ("driver groups top-3", "driver groups top-3 in >= 90% of good specs"),
    ("threshold located", "threshold within 10% of the range"),
    ("subgroup found", "subgroup found (cluster Jaccard >= 0.5)"),
    ("best beats the null", "best beats the null (p <= 0.05)"),
    (NOISE, "no {noise} named in a supported conclusion"),
    ("noise weak", "no {noise} stated as important (weaker form)"),
]
# What the noise rows are about: check_truth's `basis` of the noise criterion.
NOISE_WORDS = {"pure noise": "pure-noise indicator", "stand-in: non-driver groups": "non-driver"}
COLOURS = ["#1b6ca8", "#c0392b", "#7d3c98", "#1e8449", "#b9770e", "#5d6d7e"]


def summarise(out, units, seeds):
    rows = []
    for n in units:
        for s in seeds:
            d = os.path.join(out, f"units-{n}-seed-{s}")
            run = os.path.join(d, "run")
            rec = {"units": n, "seed": s, "criteria": {}}
            try:
                truth = json.load(open(os.path.join(d, "panel", "truth.json")))
                cb = check_truth.read_codebook(os.path.join(d, "panel", "codebook.csv"))
                res = check_truth.measure(run, truth, cb)
                for r in res:
                    rec["criteria"][r["name"]] = {"ok": bool(r["ok"]), "value": r["value"], "detail": r["detail"]}
                    if "max_support" in r:
                        rec["criteria"]["noise support"] = {
                            "ok": True, "value": r["max_support"], "detail": f"{r['mentioned']} conclusions name one"
                        }
                        rec["criteria"]["noise rank"] = {"ok": True, "value": r["best_rank"], "detail": ""}
                    if "weak" in r:
                        rec["criteria"]["noise weak"] = {"ok": bool(r["weak_ok"]), "value": None, "detail": r["weak"]}
                    if "basis" in r:
                        rec["noise_basis"] = r["basis"]
                rec["noise_indicators"] = len(truth.get("noise_indicators") or [])
                m = json.load(open(os.path.join(run, "manifest.json")))
                rec["seconds"] = m.get("seconds")
                rec["subgroup_units"] = len(truth["subgroup"]["units"])
            except Exception as e:  # a failed run counts as not recovered, with its reason
                rec["error"] = f"{type(e).__name__}: {e}"
                for key, _ in CRITERIA:
                    rec["criteria"][key] = {"ok": False, "value": None, "detail": rec["error"]}
            rows.append(rec)

    def rate(n, key):
        rs = [r for r in rows if r["units"] == n]
        return sum(r["criteria"][key]["ok"] for r in rs) / len(rs)

    def med(n, key):
        vs = [r["criteria"].get(key, {}).get("value") for r in rows if r["units"] == n]
        vs = [v for v in vs if v is not None]
        return statistics.median(vs) if vs else None

    bases = {r.get("noise_basis") for r in rows if "noise_basis" in r}
    words = NOISE_WORDS.get(bases.pop(), "noise indicator") if len(bases) == 1 else "noise indicator"
    labels = {key: label.format(noise=words) for key, label in CRITERIA}
    n_noise = sorted({r["noise_indicators"] for r in rows if "noise_indicators" in r})
    noise_note = (
        f" Each panel also has {'/'.join(map(str, n_noise))} pure-noise indicators (`toy-panel --noise`: "
        "independent draws, their own codebook group), two of them added to the config's "
        "hand-picked `core` pool."
        if n_noise and n_noise != [0]
        else ""
    )
    lines = [
        f"Recovery of the toy panel's planted truth: share of {len(seeds)} panel seeds "
        f"({', '.join(map(str, seeds))}) meeting each criterion of tests/python/check_truth.py, "
        "by number of districts (two waves, about 8% with one). Config: configs/toy-quick.toml "
        "without [nested] (544 specs, 24-draw null)." + noise_note,
        "",
        "| criterion | " + " | ".join(f"{n} units" for n in units) + " |",
        "|---|" + "---|" * len(units),
    ]
    for key, _ in CRITERIA:
        lines.append(f"| {labels[key]} | " + " | ".join(
            f"{sum(r['criteria'][key]['ok'] for r in rows if r['units'] == n)}/{sum(1 for r in rows if r['units'] == n)}"
            for n in units) + " |")
    lines += [
        "",
        "Medians of the measured values:",
        "",
        "| measured (median over seeds) | " + " | ".join(f"{n} units" for n in units) + " |",
        "|---|" + "---|" * len(units),
    ]
    fmt = {
        "driver groups top-3": ("share of good specs with only driver groups in the top 3", lambda v: f"{v:.0%}"),
        "threshold located": ("threshold error / observed range", lambda v: f"{v:.1%}"),
        "subgroup found": ("best cluster Jaccard with the affected subgroup", lambda v: f"{v:.2f}"),
        "best beats the null": ("null p of the best", lambda v: f"{v:.3f}"),
        NOISE: (f"supported conclusions naming a {words}", lambda v: f"{v:g}"),
        "noise support": (f"largest good-set support of any conclusion naming a {words} (bar 50%)", lambda v: f"{v:.0%}"),
        "noise rank": (f"best median good-spec rank of a {words}, as a share of its pool (permutation; 100% = last)", lambda v: f"{v:.0%}"),
    }
    for key, (label, f) in fmt.items():
        lines.append(f"| {label} | " + " | ".join(
            "n/a" if med(n, key) is None else f(med(n, key)) for n in units) + " |")
    errs = [r for r in rows if "error" in r]
    if errs:
        lines += ["", "Runs that could not be read (counted as not recovered):"]
        lines += [f"- {r['units']} units, seed {r['seed']}: {r['error']}" for r in errs]
    md = "\n".join(lines) + "\n"
    open(os.path.join(out, "recovery.md"), "w").write(md)
    json.dump(rows, open(os.path.join(out, "recovery.json"), "w"), indent=1)
    open(os.path.join(out, "recovery.svg"), "w").write(svg(units, [(labels[key], [rate(n, key) for n in units]) for key, _ in CRITERIA], len(seeds)))
    sys.stdout.write(md)


def svg(units, series, n_seeds):
    # The legend's width follows its longest label (about 6.2 px a character at 11 px).
    right = max(300, 60 + int(6.2 * max(len(label) for label, _ in series)))
    w, h, left, top, bottom = 420 + right, 380, 60, 30, 50
    pw, ph = w - left - right, h - top - bottom
    xs = [left + pw * i / max(len(units) - 1, 1) for i in range(len(units))]

    def y(v):
        return top + ph * (1 - v)

    p = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="sans-serif" font-size="12">',
        f'<title>Recovery rate of each truth criterion against units ({n_seeds} seeds each)</title>',
        f'<rect x="0" y="0" width="{w}" height="{h}" fill="white"/>',
    ]
    for v in (0, 0.25, 0.5, 0.75, 1):
        p.append(f'<line x1="{left}" x2="{left + pw}" y1="{y(v):.1f}" y2="{y(v):.1f}" stroke="#ddd"/>')
        p.append(f'<text x="{left - 8}" y="{y(v) + 4:.1f}" text-anchor="end">{v:.0%}</text>')
    for x, n in zip(xs, units):
        p.append(f'<text x="{x:.1f}" y="{top + ph + 18}" text-anchor="middle">{n}</text>')
    p.append(f'<text x="{left + pw / 2:.1f}" y="{h - 10}" text-anchor="middle">units (districts; axis spaced by doubling)</text>')
    p.append(f'<text x="{left + pw + 20}" y="{top + 10 + len(series) * 20 + 10}" font-size="10" fill="#555">lines are offset by a pixel or two</text>')
    p.append(f'<text x="{left + pw + 20}" y="{top + 10 + len(series) * 20 + 24}" font-size="10" fill="#555">so that equal rates stay visible</text>')
    p.append(f'<text x="14" y="{top + ph / 2:.1f}" text-anchor="middle" transform="rotate(-90 14 {top + ph / 2:.1f})">share of {n_seeds} seeds recovered</text>')
    for i, (label, rates) in enumerate(series):
        label = escape(label)
        c = COLOURS[i % len(COLOURS)]
        off = (i - len(series) / 2) * 1.5  # small vertical offsets keep equal lines visible
        pts = " ".join(f"{x:.1f},{y(r) + off:.1f}" for x, r in zip(xs, rates))
        p.append(f'<polyline points="{pts}" fill="none" stroke="{c}" stroke-width="2"/>')
        for x, r in zip(xs, rates):
            p.append(f'<circle cx="{x:.1f}" cy="{y(r) + off:.1f}" r="3.5" fill="{c}"><title>{label}: {r:.0%}</title></circle>')
        ly = top + 10 + i * 20
        p.append(f'<line x1="{left + pw + 20}" x2="{left + pw + 40}" y1="{ly}" y2="{ly}" stroke="{c}" stroke-width="2"/>')
        p.append(f'<text x="{left + pw + 46}" y="{ly + 4}" font-size="11">{label}</text>')
    p.append("</svg>")
    return "\n".join(p) + "\n"


def main(argv):
    if len(argv) >= 4 and argv[1] == "config":
        config(argv[2], argv[3])
        return 0
    if len(argv) >= 3 and argv[1] == "summarise":
        a = argv[3:]
        units = [int(v) for v in a[a.index("--units") + 1 : a.index("--seeds")]]
        seeds = [int(v) for v in a[a.index("--seeds") + 1 :]]
        summarise(argv[2], units, seeds)
        return 0
    print(__doc__)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
