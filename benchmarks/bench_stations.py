"""Benchmark: many stations, as on a floor with a pick station at every few bays.

    python benchmarks/bench_stations.py [STYLE] [BAYS] [COUNTS ...]
                                         (default: mixed 5000 0 250 1000 4000)

Reads one suite drawing (benchmarks/synthetic.py) once and builds its roadmap with no
station, to find its lanes. Then, for each count, places that many pick stations 0.8 m
beside points of those lanes (a seeded draw; only points on the free floor, 0.5 m or more
from its edge, are kept) and builds the roadmap again with them, three times. It prints
the median of the whole roadmap stage and of the stations stage (from build_roadmap's
progress), the time per station, and how many stations joined a lane. The station counts
of the warehouse suite are small (189 at 20,000 bays); real floors may have one per pick
face.
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import shapely

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from benchmarks.synthetic import write_style  # noqa: E402
from clearway.converter import read_floorplan  # noqa: E402
from clearway.roadmap import Robot, build_roadmap  # noqa: E402

ROBOT = Robot.disc(0.35, margin=0.1)
REPEATS = 3
#: How far beside a lane point each station stands, metres.
BESIDE = 0.8


def build(plan, stations):
    """(seconds of build_roadmap, seconds of its stations stage, roadmap)."""
    stamps = {}
    start = time.perf_counter()
    roadmap = build_roadmap(plan.obstacles, plan.free_space, stations, robot=ROBOT,
                            shared_zones=plan.regions["shared"], openings=plan.openings,
                            texts=plan.texts,
                            progress=lambda stage: stamps.setdefault(stage, time.perf_counter()))
    total = time.perf_counter() - start
    return total, stamps["checks"] - stamps["stations"], roadmap


def pick_stations(plan, roadmap, count, seed=0):
    """`count` stations BESIDE metres off points of the roadmap's lanes (drawing frame)."""
    if count == 0:
        return []
    lanes = [data["geometry"] for _, _, data in roadmap.graph.edges(data=True)]
    xy = shapely.get_coordinates(shapely.segmentize(np.array(lanes, dtype=object), 1.0))
    rng = np.random.default_rng(seed)
    free = plan.free_space
    shapely.prepare(free)
    edge = free.boundary
    found = np.zeros((0, 2))
    while len(found) < count:
        at = xy[rng.integers(len(xy), size=4 * count)]
        turn = rng.uniform(0.0, 2 * np.pi, len(at))
        points = at + BESIDE * np.column_stack([np.cos(turn), np.sin(turn)])
        keep = shapely.contains_xy(free, points[:, 0], points[:, 1]) & \
            (shapely.distance(edge, shapely.points(points)) >= 0.5)
        found = np.concatenate([found, points[keep]])
    return [(f"P{k}", float(x), float(y), "pick", None) for k, (x, y) in enumerate(found[:count])]


def main(argv):
    style = argv[0] if argv else "mixed"
    bays = int(argv[1]) if len(argv) > 1 else 5000
    counts = [int(value) for value in argv[2:]] or [0, 250, 1000, 4000]
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"{style}_{bays}.dxf"
        write_style(path, style, bays)
        plan = read_floorplan(path)
    _, _, bare = build(plan, [])
    print(f"{style} at {bays} bays; medians of {REPEATS} on a shared, noisy machine")
    print(f"{'stations':>8} {'roadmap s':>10} {'stations s':>11} {'ms each':>8} {'joined':>7}")
    for count in counts:
        stations = pick_stations(plan, bare, count)
        runs = [build(plan, stations) for _ in range(REPEATS)]
        total = statistics.median(run[0] for run in runs)
        linking = statistics.median(run[1] for run in runs)
        joined = sum(result.reachable for result in runs[0][2].findings.stations)
        each = f"{1000 * linking / count:8.2f}" if count else f"{'-':>8}"
        print(f"{count:8d} {total:10.2f} {linking:11.2f} {each} {joined:7d}")


if __name__ == "__main__":
    main(sys.argv[1:])
