"""Open a forkmap report page in headless Chromium, offline, and check it as a person sees it.

Checks (each failure is listed, and the exit status is 1 when there is any):
  * no console error and no uncaught page error;
  * no request but the page's own file (every request is logged; anything else is aborted
    and reported; the browser context is also offline);
  * at least one plot, and every plot (`svg.fm-plot`) drawn: each of its data regions
    (`rect.fm-data`, invisible markers the renderer puts over the plot's data area) holds
    enough coloured pixels in a screenshot of the plot (grey axes, grid lines and text do
    not count: a pixel counts when its channels differ by more than CHROMA);
  * the page's sections are there and every plot is also saved as its own .svg file.

Usage:
  check_page.py --chromium /usr/bin/chromium [--shots DIR] REPORT_DIR
  check_page.py --chromium /usr/bin/chromium --self-test DIR
The self-test writes pages made to fail (a blank plot, a page that requests an address,
a console error) and one that should pass, and checks the checker tells them apart.
"""

import argparse
import pathlib
import re
import sys

from PIL import Image
from playwright.sync_api import sync_playwright

CHROMA = 40  # max - min over R, G, B above which a pixel is "coloured"
MIN_SHARE = 0.002  # of a data region's area
MIN_PIXELS = 30

FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]

# Each plot's data regions, relative to the plot's own box (CSS pixels).
REGIONS_JS = """
() => [...document.querySelectorAll('svg.fm-plot')].map(svg => {
  const b = svg.getBoundingClientRect();
  return {
    title: (svg.querySelector('title') || {}).textContent || '',
    width: b.width, height: b.height,
    marks: [...svg.querySelectorAll('rect.fm-data')].map(r => {
      const m = r.getBoundingClientRect();
      return {x: m.left - b.left, y: m.top - b.top, w: m.width, h: m.height};
    }),
  };
})
"""


def coloured(img, box):
    """Coloured pixels and all pixels of img inside box = (x0, y0, x1, y1)."""
    crop = img.crop(box).convert("RGB")
    data = crop.tobytes()
    n = 0
    for i in range(0, len(data), 3):
        px = data[i : i + 3]
        if max(px) - min(px) > CHROMA:
            n += 1
    return n, crop.width * crop.height


def check(chromium, page_path, shots=None, sections=True):
    """Return (failures, info lines) for one page."""
    page_path = pathlib.Path(page_path).resolve()
    url = page_path.as_uri()
    failures, info = [], []
    requests, console, page_errors = [], [], []
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium, headless=True, args=FLAGS)
        try:
            context = browser.new_context(
                offline=True, viewport={"width": 1100, "height": 900}, device_scale_factor=1
            )

            def route(r):
                if r.request.url == url:
                    r.continue_()
                else:
                    r.abort()

            context.route("**/*", route)
            page = context.new_page()
            page.on("request", lambda r: requests.append(r.url))
            page.on(
                "console",
                lambda m: console.append(f"{m.type}: {m.text}") if m.type == "error" else None,
            )
            page.on("pageerror", lambda e: page_errors.append(str(e)))
            page.goto(url, wait_until="load")
            page.wait_for_timeout(300)

            regions = page.evaluate(REGIONS_JS)
            if not regions:
                failures.append("no plot (svg.fm-plot) on the page")
            shots_dir = pathlib.Path(shots) if shots else None
            if shots_dir:
                shots_dir.mkdir(parents=True, exist_ok=True)
                page.screenshot(path=str(shots_dir / "page-top.png"))
            plots = page.locator("svg.fm-plot")
            for i, reg in enumerate(regions):
                name = reg["title"][:70] or f"plot {i + 1}"
                if reg["width"] < 10 or reg["height"] < 10:
                    failures.append(f"{name}: not laid out ({reg['width']} x {reg['height']})")
                    continue
                if not reg["marks"]:
                    failures.append(f"{name}: no data region marked")
                    continue
                shot = (shots_dir or page_path.parent) / f"plot-{i + 1}.png"
                plots.nth(i).screenshot(path=str(shot))
                img = Image.open(shot)
                sx, sy = img.width / reg["width"], img.height / reg["height"]
                for j, m in enumerate(reg["marks"]):
                    box = (
                        max(0, int(m["x"] * sx)),
                        max(0, int(m["y"] * sy)),
                        min(img.width, int((m["x"] + m["w"]) * sx)),
                        min(img.height, int((m["y"] + m["h"]) * sy)),
                    )
                    if box[2] <= box[0] or box[3] <= box[1]:
                        failures.append(f"{name}: data region {j + 1} is empty ({box})")
                        continue
                    n, total = coloured(img, box)
                    ok = n >= max(MIN_PIXELS, MIN_SHARE * total)
                    info.append(
                        f"{'ok  ' if ok else 'FAIL'} {name}: region {j + 1}: {n} of {total} pixels drawn"
                    )
                    if not ok:
                        failures.append(f"{name}: data region {j + 1} looks blank ({n} of {total} pixels)")
                if not shots_dir:
                    shot.unlink()
            if shots_dir:
                page.screenshot(path=str(shots_dir / "page-full.png"), full_page=True)
            html = page_path.read_text(encoding="utf-8")
        finally:
            browser.close()

    others = sorted({u for u in requests if u != url})
    for u in others:
        failures.append(f"request left the file: {u}")
    if url not in requests:
        failures.append("the page's own request was not seen (is request logging working?)")
    for c in console:
        failures.append(f"console {c}")
    for e in page_errors:
        failures.append(f"page error: {e}")
    if sections:
        for sid in ["headline", "cautions", "run", "plots", "tables"]:
            if f'id="{sid}"' not in html:
                failures.append(f"section #{sid} missing")
        for f in re.findall(r"also saved as <code>report/([^<]+)</code>", html):
            if not (page_path.parent / f).is_file():
                failures.append(f"plot file {f} missing beside index.html")
    info.append(f"requests seen: {len(requests)} ({len(others)} besides the file)")
    return failures, info


GOOD_SVG = """<svg class="fm-plot" width="300" height="200" viewBox="0 0 300 200"><title>good</title>
<rect x="0" y="0" width="300" height="200" fill="#fcfbf8"/>
<rect x="40" y="40" width="200" height="120" fill="#166268"/>
<rect class="fm-data" x="20" y="20" width="260" height="160" fill="none" stroke="none"/></svg>"""
BLANK_SVG = """<svg class="fm-plot" width="300" height="200" viewBox="0 0 300 200"><title>blank</title>
<rect x="0" y="0" width="300" height="200" fill="#fcfbf8"/>
<line x1="20" y1="180" x2="280" y2="180" stroke="#696e78"/>
<text x="30" y="100" fill="#22262e">axes and text only</text>
<rect class="fm-data" x="20" y="20" width="260" height="160" fill="none" stroke="none"/></svg>"""
SECTIONS = "".join(f'<section id="{s}"></section>' for s in ["headline", "cautions", "run", "plots", "tables"])


def page(body):
    return f"<!DOCTYPE html><html><head><meta charset='utf-8'><title>t</title></head><body>{SECTIONS}{body}</body></html>"


def self_test(chromium, where):
    where = pathlib.Path(where)
    cases = {
        "passes": (page(GOOD_SVG), None),
        "blank-plot": (page(GOOD_SVG + BLANK_SVG), "looks blank"),
        "no-plot": (page("<p>nothing</p>"), "no plot"),
        # A loopback address on the discard port: nothing outside this machine is asked.
        "request": (page(GOOD_SVG + '<img src="http://127.0.0.1:9/x.png" alt="">'), "request left the file"),
        "console-error": (page(GOOD_SVG + "<script>console.error('boom')</script>"), "console error"),
        "page-error": (page(GOOD_SVG + "<script>undefinedFunction()</script>"), "page error"),
    }
    bad = []
    for name, (html, expect) in cases.items():
        d = where / name
        d.mkdir(parents=True, exist_ok=True)
        (d / "index.html").write_text(html, encoding="utf-8")
        failures, _ = check(chromium, d / "index.html", sections=True)
        if expect is None and failures:
            bad.append(f"self-test {name}: should pass, failed: {failures}")
        elif expect is not None and not any(expect in f for f in failures):
            bad.append(f"self-test {name}: should fail with '{expect}', got {failures}")
        else:
            print(f"check-report: self-test {name}: {'passes' if expect is None else 'caught: ' + expect}")
    return bad


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--chromium", required=True)
    ap.add_argument("--shots")
    ap.add_argument("--self-test", dest="self_test")
    ap.add_argument("report", nargs="?")
    a = ap.parse_args()
    if a.self_test:
        bad = self_test(a.chromium, a.self_test)
        for b in bad:
            print(f"check-report: {b}", file=sys.stderr)
        if bad:
            print(f"check-report: the checker itself is broken: 0 passed, {len(bad)} failed", file=sys.stderr)
            return 1
        return 0
    if not a.report:
        ap.error("REPORT_DIR is required")
    failures, info = check(a.chromium, pathlib.Path(a.report) / "index.html", shots=a.shots)
    for line in info:
        print(f"check-report: {line}")
    for f in failures:
        print(f"check-report: FAILED: {f}", file=sys.stderr)
    checks = "page in headless chromium"
    if failures:
        print(f"check-report: {checks}: {len(failures)} problem(s)", file=sys.stderr)
        return 1
    print(f"check-report: {checks}: no console error, every plot drawn, no request but the file")
    return 0


if __name__ == "__main__":
    sys.exit(main())
