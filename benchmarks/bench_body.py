"""Benchmark: build_roadmap for rectangular and car robots against the disc robot.

    python benchmarks/bench_body.py [BAYS] [--car]   (default: 20000, the largest warehouse)

Reads one synthetic warehouse (benchmarks/synthetic.py) once, then builds its roadmap
alternately for each robot (interleaved, so that a noisy neighbour slows them alike) and
prints the median build time of each (wall clock, and the process's CPU time, which a busy
shared machine disturbs less), their ratios to the disc robot's, and what the body checks
found. Target (issue 14): a rectangular robot at most 1.5 x the disc robot's time.
``--car`` adds a car robot that may reverse, whose turn checks try up to nine paths per pair
of edges at every node (manoeuvres.py) and take longer.
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from benchmarks.synthetic import write_warehouse  # noqa: E402
from clearway.converter import read_floorplan  # noqa: E402
from clearway.roadmap import Robot, build_roadmap  # noqa: E402

ROBOTS = {
    "disc 0.4 m": Robot.disc(0.4, margin=0.1),
    "rect 1.4x0.8 differential": Robot.rectangle(1.4, 0.8, margin=0.1),
    "rect 1.6x1.2 tugger": Robot.rectangle(1.6, 1.2, margin=0.1, centre=(-0.5, 0.0)),
}
CAR = {"rect 1.4x0.8 car R 1.5": Robot.rectangle(1.4, 0.8, margin=0.1, kind="car",
                                                 centre=(-0.5, 0.0), turn_radius=1.5)}
REPEATS = 3


def main(bays: int, robots: dict) -> None:
    with tempfile.TemporaryDirectory() as folder:
        plan = read_floorplan(write_warehouse(Path(folder) / "warehouse.dxf", bays))
    stations = [(s.label, s.x, s.y) for s in plan.stations]
    times = {name: [] for name in robots}
    cpu = {name: [] for name in robots}
    results = {}
    for _ in range(REPEATS):
        for name, robot in robots.items():
            start, start_cpu = time.perf_counter(), time.process_time()
            results[name] = build_roadmap(plan.obstacles, plan.free_space, stations,
                                          robot=robot, shared_zones=plan.regions["shared"])
            times[name].append(time.perf_counter() - start)
            cpu[name].append(time.process_time() - start_cpu)
    disc = statistics.median(times["disc 0.4 m"])
    disc_cpu = statistics.median(cpu["disc 0.4 m"])
    print(f"{bays} bays, {len(stations)} stations; median of {REPEATS} builds, seconds")
    print(f"{'robot':<28} {'build':>7} {'/ disc':>7} {'cpu':>7} {'/ disc':>7} {'edges':>6} "
          f"{'lanes out':>9} "
          f"{'turns out':>9} {'rev only':>8} {'reached':>8}")
    for name, result in results.items():
        median, median_cpu = statistics.median(times[name]), statistics.median(cpu[name])
        body = result.findings.body
        reverse = sum(1 for _, flag in result.graph.nodes(data="reverse_only") if flag)
        reached = sum(1 for s in result.findings.stations if s.reachable)
        print(f"{name:<28} {median:>7.3f} {median / disc:>7.2f} {median_cpu:>7.3f} "
              f"{median_cpu / disc_cpu:>7.2f} "
              f"{result.graph.number_of_edges():>6} "
              f"{sum(1 for s in body if s.what in ('lane', 'link')):>9} "
              f"{sum(1 for s in body if s.what.startswith('turn')):>9} {reverse:>8} "
              f"{reached:>4}/{len(stations):<3}")


if __name__ == "__main__":
    numbers = [int(value) for value in sys.argv[1:] if value.isdigit()]
    main(numbers[0] if numbers else 20000, ROBOTS | (CAR if "--car" in sys.argv else {}))
