"""Benchmark: roadmap.html in headless Chromium, first full picture and pan/zoom frame rate.

    python benchmarks/bench_viewer.py [BAYS ...]        (default: 5000 20000)

For each size it builds a synthetic warehouse (``benchmarks/synthetic.py``), renders the
page, and opens it in Debian's Chromium (``/usr/bin/chromium``, or $CLEARWAY_CHROMIUM)
through Playwright, in a 1400 x 900 CSS px window at device scale 1:

- first picture: milliseconds from the start of navigation to the end of the page's first
  complete drawing of the fitted plan (``performance.now()`` at that moment; the page's
  time origin is the navigation start), median of several fresh loads;
- frame rate: the page is driven from requestAnimationFrame for a few seconds in three
  scripted motions (pan across the whole fitted plan; zoom from the whole plan into one
  aisle and back; pan along aisles at 20 px per metre, up to 1,500 px per second, a brisk
  drag). Frames per second count the frames drawn (the browser caps them at the display
  rate, 60); draw ms is the median and 95th percentile of the page's own time per frame;
  each motion runs three times and fps is the median. The same loop drawing nothing
  ("idle") gives the frame rate the browser reaches on the machine as loaded at the time.

Targets (issue 13, 2 cores): a 20,000-bay warehouse shows its first full picture in under
2 s and pans and zooms at 30 frames per second or better. Numbers are medians on a shared,
noisy machine; never asserted in a unit test.
"""

from __future__ import annotations

import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from benchmarks.synthetic import write_warehouse  # noqa: E402
from clearway.converter import read_floorplan  # noqa: E402
from clearway.exporters import render_html  # noqa: E402
from clearway.roadmap import Robot, build_roadmap  # noqa: E402

CHROMIUM = os.environ.get("CLEARWAY_CHROMIUM", "/usr/bin/chromium")
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]
LOADS = 5
SECONDS_PER_MOTION = 3.0
MOTION_REPEATS = 3

#: One scripted motion, run in the page: each animation frame moves the view, the page
#: draws it in the next frame. Returns frames drawn, elapsed ms and the page's draw times.
MOTION = """async ([kind, seconds]) => {
  const v = window.clearwayViewer, start = v.view(), stats = v.stats;
  const t0 = performance.now(), frames0 = stats.frames, times = [];
  const span = start.width / start.scale;          // metres across the fitted window
  await new Promise(resolve => {
    function step(now) {
      const t = (now - t0) / (seconds * 1000);
      if (stats.frames > frames0) times.push(stats.lastFrameMs);
      if (t >= 1) { resolve(); return; }
      const wave = Math.sin(2 * Math.PI * t);
      if (kind === "idle") { requestAnimationFrame(step); stats.frames++; return; }
      if (kind === "pan") v.setView(start.x + 0.3 * span * wave, start.y + 0.2 * span * Math.cos(2 * Math.PI * t), start.scale);
      else if (kind === "zoom") v.setView(start.x, start.y, start.scale * Math.pow(20 / start.scale, 0.5 - 0.5 * Math.cos(2 * Math.PI * t)));
      else v.setView(start.x + 36 * wave, start.y + 9 * wave, 20);   // <= 1,500 px/s
      requestAnimationFrame(step);
    }
    requestAnimationFrame(step);
  });
  const elapsed = performance.now() - t0;
  v.setView(start.x, start.y, start.scale);
  return { frames: stats.frames - frames0, elapsed: elapsed, times: times };
}"""


def build_page(bays: int, folder: Path) -> tuple[Path, dict]:
    drawing = write_warehouse(folder / f"warehouse_{bays}.dxf", bays=bays)
    plan = read_floorplan(drawing)
    roadmap = build_roadmap(plan.obstacles, plan.free_space,
                            [(s.label, s.x, s.y) for s in plan.stations],
                            robot=Robot.disc(0.35, margin=0.1),
                            shared_zones=plan.regions["shared"])
    started = time.perf_counter()
    page = render_html(plan, roadmap, date="benchmark")
    render_seconds = time.perf_counter() - started
    path = folder / f"warehouse_{bays}.html"
    path.write_bytes(page)
    return path, {"bays": bays, "size_mb": len(page) / 1e6, "render_s": render_seconds,
                  "nodes": roadmap.graph.number_of_nodes(),
                  "edges": roadmap.graph.number_of_edges()}


def measure(playwright, path: Path, row: dict) -> dict:
    firsts, walls = [], []
    for _ in range(LOADS):
        with tempfile.TemporaryDirectory(prefix="clearway-bench-") as profile:
            context = playwright.chromium.launch_persistent_context(
                profile, executable_path=CHROMIUM, headless=True, args=ARGS,
                viewport={"width": 1400, "height": 900}, device_scale_factor=1)
            page = context.new_page()
            started = time.perf_counter()
            page.goto(path.resolve().as_uri())
            page.wait_for_selector("body[data-ready='1']", timeout=60_000)
            walls.append(time.perf_counter() - started)
            firsts.append(page.evaluate("window.clearwayViewer.stats.firstPicture"))
            if len(firsts) == LOADS:
                for kind in ("idle", "pan", "zoom", "aisle"):
                    results = [page.evaluate(MOTION, [kind, SECONDS_PER_MOTION])
                               for _ in range(MOTION_REPEATS)]
                    times = sorted(t for result in results for t in result["times"]) or [
                        float("nan")]
                    row[kind] = {"fps": statistics.median(
                                     result["frames"] / (result["elapsed"] / 1000)
                                     for result in results),
                                 "median_ms": statistics.median(times),
                                 "p95_ms": times[min(len(times) - 1, int(0.95 * len(times)))]}
            context.close()
    row["first_ms"] = statistics.median(firsts)
    row["goto_s"] = statistics.median(walls)
    return row


def main(sizes):
    from playwright.sync_api import sync_playwright
    if not os.access(CHROMIUM, os.X_OK):
        sys.exit(f"no Chromium at {CHROMIUM}; install Debian's chromium or set CLEARWAY_CHROMIUM")
    print(f"machine: {os.cpu_count()} cores, {os.uname().machine}, Python "
          f"{sys.version.split()[0]}; 1400x900 CSS px window; medians of {LOADS} loads")
    rows = []
    with tempfile.TemporaryDirectory(prefix="clearway-bench-") as folder, \
            sync_playwright() as playwright:
        for bays in sizes:
            path, row = build_page(bays, Path(folder))
            rows.append(measure(playwright, path, row))
    print(f"{'bays':>6} {'nodes':>6} {'lanes':>6} {'page MB':>7} {'render s':>8} "
          f"{'first ms':>8} {'goto s':>6}   {'idle fps':>8}   {'pan fps':>7} {'ms':>9}   {'zoom fps':>8} "
          f"{'ms':>9}   {'aisle fps':>9} {'ms':>9}")
    for row in rows:
        motions = f"{row['idle']['fps']:>8.0f}   " + "   ".join(f"{row[k]['fps']:>{w}.0f} {row[k]['median_ms']:>4.1f}/{row[k]['p95_ms']:<4.1f}"
                             for k, w in (("pan", 7), ("zoom", 8), ("aisle", 9)))
        print(f"{row['bays']:>6} {row['nodes']:>6} {row['edges']:>6} {row['size_mb']:>7.2f} "
              f"{row['render_s']:>8.2f} {row['first_ms']:>8.0f} {row['goto_s']:>6.2f}   {motions}")
    print("first ms: navigation start to the first full picture; goto s: the same seen from "
          "outside (Playwright's goto to the page's ready mark); fps: frames drawn per second "
          "while moving (capped at 60 by the browser); idle fps: the same loop drawing nothing, "
          "what the loaded machine allows at best; ms: the page's draw time per frame, "
          "median/95th percentile")


if __name__ == "__main__":
    main([int(arg) for arg in sys.argv[1:]] or [5000, 20000])
