"""Benchmark: read + convert + roadmap on synthetic warehouses, against ezdxf and a raster.

    python benchmarks/bench_roadmap.py [BAYS ...]        (default: 1000 5000 20000)
    python benchmarks/bench_roadmap.py --profile BAYS    (cProfile of one build_roadmap)

Each size runs in its own child process, so the peak memory (RSS high-water mark,
``resource.getrusage``) belongs to that size alone. Per size it prints the median of
several runs of each stage:

- parse: ezdxf's own recovery read of the file's bytes (the path read_floorplan takes);
- convert: read_floorplan's total less that parse;
- prep, inflate, voronoi, graph, stations, checks: the stages of build_roadmap, timed through
  its progress callback on one plan read once (prep = local frame and validity; inflate =
  drivable region, inflated obstacles and the clearance index);
- total = read_floorplan + build_roadmap, and total / parse;
- rooms: how much longer build_roadmap takes than the same build with rooms switched off
  (no cuts, no room nodes, no room values), in per cent (issue 10: at most 15 %).

The raster baseline is scipy's Euclidean distance transform plus scikit-image's skeletonize
of the free space rasterized at 2 cm pixels (the resolution that reaches 2 cm). Rasterizing
is not timed (it favours the raster). A whole 20,000-bay floor at 2 cm is about 1.6e9 pixels
(over 12 GiB as float64 distances), so the baseline runs on a representative window of the
floor and its time is scaled by the floor's pixel count / the window's pixel count (both
steps are linear in pixels); at 1,000 bays it also runs on the whole floor, to check the
scaling.

Targets (issue 3, 2 cores): read + convert + roadmap of about 5,000 bays <= 1 s and of about
20,000 bays <= 4 s and 800 MiB; total <= 3 x parse; >= 20 x faster than the raster; about
linear growth. The numbers are medians on a shared, noisy machine: compare within one run.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import shapely

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from benchmarks.synthetic import write_warehouse  # noqa: E402
from clearway.converter import read_floorplan  # noqa: E402
from clearway.converter.document import quiet_library  # noqa: E402
from clearway.roadmap import Robot, build_roadmap  # noqa: E402

ROBOT = Robot.disc(0.4, margin=0.1)
STAGES = ("prep", "inflating", "voronoi", "rooms", "graph", "stations", "checks")
PIXEL = 0.02
#: Side of the square raster window, metres (a 60 m window at 2 cm is 9e6 pixels).
WINDOW = 60.0


def repeats_for(bays):
    return 5 if bays <= 5000 else 3


def build(plan, progress=None):
    return build_roadmap(plan.obstacles, plan.free_space,
                         [(s.label, s.x, s.y) for s in plan.stations], robot=ROBOT,
                         shared_zones=plan.regions["shared"], progress=progress)


def timed_build(plan):
    marks = [("prep", time.perf_counter())]
    result = build(plan, lambda stage: marks.append((stage, time.perf_counter())))
    marks.append(("end", time.perf_counter()))
    times = {name: b - a for (name, a), (_, b) in zip(marks[:-1], marks[1:])}
    return result, times


@contextlib.contextmanager
def rooms_off():
    """build_roadmap as it was before rooms: no cuts, no room nodes, no room values."""
    from clearway.roadmap import build as stage
    saved = {name: getattr(stage, name) for name in
             ("opening_cuts", "narrowings", "split_floor", "room_seeds", "describe_rooms")}
    stage.opening_cuts = lambda openings, offset: []
    stage.narrowings = lambda *args, **kwargs: []
    stage.split_floor = lambda free, cuts: np.empty(0, object)
    stage.room_seeds = lambda rooms, *args, **kwargs: np.zeros(0, np.int64)
    stage.describe_rooms = lambda *args, **kwargs: ((), ())
    try:
        yield
    finally:
        for name, value in saved.items():
            setattr(stage, name, value)


def rasterize(free, bounds):
    """Free space as a boolean image of PIXEL-metre pixels over `bounds` (pixel centres)."""
    xmin, ymin, xmax, ymax = bounds
    xs = np.arange(xmin + PIXEL / 2, xmax, PIXEL)
    ys = np.arange(ymin + PIXEL / 2, ymax, PIXEL)
    shapely.prepare(free)
    image = np.zeros((len(ys), len(xs)), dtype=bool)
    for row, y in enumerate(ys):
        image[row] = shapely.contains_xy(free, xs, np.full(len(xs), y))
    return image


def raster_seconds(image, repeats):
    from scipy.ndimage import distance_transform_edt
    from skimage.morphology import skeletonize

    def run():
        distance = distance_transform_edt(image) * PIXEL
        skeleton = skeletonize(image)
        return distance, skeleton
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        run()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def measure(bays, raster_full=False):
    """Measure one size in this process; return a dict of figures."""
    from ezdxf import recover
    repeats = repeats_for(bays)
    with tempfile.TemporaryDirectory() as folder:
        path = write_warehouse(Path(folder) / f"warehouse_{bays}.dxf", bays)
        data = path.read_bytes()
        parse, read = [], []
        for _ in range(repeats):
            start = time.perf_counter()
            with quiet_library():
                recover.read(io.BytesIO(data))
            parse.append(time.perf_counter() - start)
            start = time.perf_counter()
            plan = read_floorplan(path)
            read.append(time.perf_counter() - start)
    stages = {name: [] for name in STAGES}
    builds = []
    for _ in range(repeats):
        start = time.perf_counter()
        roadmap, times = timed_build(plan)
        builds.append(time.perf_counter() - start)
        for name in STAGES:
            stages[name].append(times.get(name, 0.0))
    bare = []
    with rooms_off():
        for _ in range(repeats):
            start = time.perf_counter()
            build(plan)
            bare.append(time.perf_counter() - start)
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux
    graph = roadmap.graph
    result = {
        "bays": bays, "parse": statistics.median(parse),
        "read": statistics.median(read), "build": statistics.median(builds),
        "bare": statistics.median(bare),
        "stages": {name: statistics.median(v) for name, v in stages.items()},
        "peak_mib": peak, "nodes": graph.number_of_nodes(), "edges": graph.number_of_edges(),
        "free_m2": float(plan.free_space.area), "size_mb": len(data) / 1e6,
    }
    free = shapely.union_all(shapely.get_parts(plan.free_space))
    xmin, ymin, xmax, ymax = free.bounds
    result["floor_pixels"] = float(np.ceil((xmax - xmin) / PIXEL) * np.ceil((ymax - ymin) / PIXEL))
    window = (xmin, ymin, min(xmax, xmin + WINDOW), min(ymax, ymin + WINDOW))
    image = rasterize(free, window)
    result["window_pixels"] = float(image.size)
    result["window_raster"] = raster_seconds(image, 3)
    del image
    if raster_full:
        image = rasterize(free, (xmin, ymin, xmax, ymax))
        result["full_raster"] = raster_seconds(image, 1)
    return result


def profile(bays):
    import cProfile
    import pstats
    with tempfile.TemporaryDirectory() as folder:
        path = write_warehouse(Path(folder) / f"warehouse_{bays}.dxf", bays)
        profiler = cProfile.Profile()
        profiler.enable()
        plan = read_floorplan(path)
        build(plan)
        profiler.disable()
    pstats.Stats(profiler).sort_stats("cumulative").print_stats(45)


def main(sizes):
    print(f"machine: {os.cpu_count()} cores, {os.uname().machine}, Python "
          f"{sys.version.split()[0]}; medians on a shared, noisy machine")
    rows = []
    for bays in sizes:
        out = subprocess.run([sys.executable, __file__, "--one", str(bays)]
                             + (["--full"] if bays <= 1000 else []),
                             capture_output=True, text=True, check=True)
        rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    head = (f"{'bays':>6} {'MB':>5} {'parse':>6} {'conv':>6} {'prep':>5} {'infl':>5} "
            f"{'vor':>5} {'room':>5} {'graph':>5} {'stat':>5} {'chk':>5} {'total':>6} "
            f"{'/parse':>6} "
            f"{'MiB':>5} {'raster':>7} {'speedup':>7} {'nodes':>6} {'rooms%':>6}")
    print(head)
    for row in rows:
        stage = row["stages"]
        total = row["read"] + row["build"]
        raster = row["window_raster"] * row["floor_pixels"] / row["window_pixels"]
        row["total"], row["raster"] = total, raster
        print(f"{row['bays']:>6} {row['size_mb']:>5.1f} {row['parse']:>6.3f} "
              f"{row['read'] - row['parse']:>6.3f} {stage['prep']:>5.2f} "
              f"{stage['inflating']:>5.2f} {stage['voronoi']:>5.2f} {stage['rooms']:>5.2f} "
              f"{stage['graph']:>5.2f} "
              f"{stage['stations']:>5.2f} {stage['checks']:>5.2f} {total:>6.3f} "
              f"{total / row['parse']:>6.2f} {row['peak_mib']:>5.0f} {raster:>7.1f} "
              f"{raster / total:>7.1f} {row['nodes']:>6} "
              f"{100 * (row['build'] / row['bare'] - 1):>+6.1f}")
    print("rooms% = build_roadmap with rooms / without rooms - 1 (target <= 15 %)")
    print("times in seconds; raster = EDT + skeletonize at 2 cm, scaled from a "
          f"{WINDOW:.0f} m window by pixel count")
    for row in rows:
        if "full_raster" in row:
            print(f"{row['bays']} bays: raster on the whole floor {row['full_raster']:.1f} s "
                  f"({row['floor_pixels'] / 1e6:.0f} Mpixel) vs scaled {row['raster']:.1f} s")
    for a, b in zip(rows[:-1], rows[1:]):
        print(f"growth {a['bays']} -> {b['bays']} bays (x{b['bays'] / a['bays']:.1f}): "
              f"total x{b['total'] / a['total']:.2f}, parse x{b['parse'] / a['parse']:.2f}, "
              f"roadmap x{b['build'] / a['build']:.2f}")


if __name__ == "__main__":
    arguments = sys.argv[1:]
    if arguments[:1] == ["--one"]:
        print(json.dumps(measure(int(arguments[1]), raster_full="--full" in arguments)))
    elif arguments[:1] == ["--profile"]:
        profile(int(arguments[1]))
    else:
        main([int(value) for value in arguments] or [1000, 5000, 20000])
