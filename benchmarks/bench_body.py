"""Benchmark: build_roadmap for rectangular and car robots against the disc robot.

    python benchmarks/bench_body.py [BAYS] [--car] [--whole]
                                     (default: 20000, the largest warehouse)

Reads one synthetic warehouse (benchmarks/synthetic.py) once, then builds its roadmap
alternately for each robot (interleaved, so that a noisy neighbour slows them alike) and
prints the median time of `build_roadmap` for each (wall clock, and the process's CPU time,
which a busy shared machine disturbs less), their ratios to the disc robot's, and what the
body checks found. Target (issue 14): a rectangular robot's build at most 1.5 x the disc
robot's time. ``--car`` adds a car robot that may reverse, whose turn checks try up to nine
paths per pair of edges at every node (manoeuvres.py) and take longer.

``--whole`` also times what a user waits for: a whole ``python -m clearway build`` process
of the same drawing for each robot, with the same options on its command line, interleaved
in the same way (wall clock, CPU time of the process and its children, peak memory). The
roadmap stage alone is the stricter ratio: reading the drawing and writing the outputs
cost every robot about the same.
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from benchmarks.bench_suite import run_process  # noqa: E402
from benchmarks.bytecode import compile_sources  # noqa: E402
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
#: Writes the warehouse (argv: path, bays) in a process of its own.
WRITE = (f"import sys; sys.path.insert(0, {str(Path(__file__).resolve().parent.parent)!r}); "
         "from benchmarks.synthetic import write_warehouse; "
         "write_warehouse(sys.argv[1], int(sys.argv[2]))")
#: The same robots as `clearway build` options.
OPTIONS = {
    "disc 0.4 m": ["--robot-radius", "0.4", "--margin", "0.1"],
    "rect 1.4x0.8 differential": ["--robot-size", "1.4x0.8", "--margin", "0.1"],
    "rect 1.6x1.2 tugger": ["--robot-size", "1.6x1.2", "--margin", "0.1",
                            "--rotation-centre=-0.5,0"],
    "rect 1.4x0.8 car R 1.5": ["--robot-size", "1.4x0.8", "--margin", "0.1",
                               "--robot-kind", "car", "--rotation-centre=-0.5,0",
                               "--turn-radius", "1.5"],
}


def whole_builds(path: Path, robots: dict, folder: Path) -> list[str]:
    """Time a whole `clearway build` process of `path` per robot, interleaved; return the
    table's lines (medians)."""
    compile_sources()       # as pip install does, so no timed build compiles clearway
    times = {name: [] for name in robots}
    cpu = {name: [] for name in robots}
    peak = {name: 0.0 for name in robots}
    for _ in range(REPEATS):
        for name in robots:
            seconds, mib, _, used = run_process(
                [sys.executable, "-m", "clearway", "build", str(path),
                 "-o", str(folder / "out"), *OPTIONS[name]])
            times[name].append(seconds)
            cpu[name].append(used)
            peak[name] = max(peak[name], mib)
    disc = statistics.median(times["disc 0.4 m"])
    disc_cpu = statistics.median(cpu["disc 0.4 m"])
    lines = [f"whole `clearway build` processes, median of {REPEATS}, seconds",
             f"{'robot':<28} {'build':>7} {'/ disc':>7} {'cpu':>7} {'/ disc':>7} {'MiB':>6}"]
    for name in robots:
        median, median_cpu = statistics.median(times[name]), statistics.median(cpu[name])
        lines.append(f"{name:<28} {median:>7.3f} {median / disc:>7.2f} {median_cpu:>7.3f} "
                     f"{median_cpu / disc_cpu:>7.2f} {peak[name]:>6.0f}")
    return lines


def main(bays: int, robots: dict, whole: bool = False) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "warehouse.dxf"
        # written and built in processes of their own before this one reads the drawing:
        # a child would start with this process's peak memory
        run_process([sys.executable, "-c", WRITE, str(path), str(bays)])
        table = whole_builds(path, robots, Path(folder)) if whole else []
        plan = read_floorplan(path)
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
    if table:
        print("", *table, sep="\n")


if __name__ == "__main__":
    numbers = [int(value) for value in sys.argv[1:] if value.isdigit()]
    main(numbers[0] if numbers else 20000, ROBOTS | (CAR if "--car" in sys.argv else {}),
         whole="--whole" in sys.argv)
