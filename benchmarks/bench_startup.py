"""Start-up time of the `clearway` command: how long until it answers, per command.

    python benchmarks/bench_startup.py [--runs 9]

Each command runs as a fresh process (as from a shell), `--runs` times; the table gives the
median and the fastest wall-clock time, each median minus the bare interpreter's, and the
median CPU time (user + system) of the process, which depends less on how busy the machine is. The
last row imports every stage the way each command did before it imported only what it needs.
The machines are shared and noisy: compare the rows of one run, quote medians.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from benchmarks.bytecode import compile_sources  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"
CLI = "from clearway.cli import main; main()"      # what the `clearway` script runs
EVERY_STAGE = ("from clearway import converter, roadmap, exporters; "
               "[getattr(package, name) for package in (converter, roadmap, exporters) "
               "for name in package.__all__]")

COMMANDS = [
    ("python -c pass (the interpreter alone)", ["-c", "pass"]),
    ("clearway --version", ["-c", CLI, "--version"]),
    ("clearway --help", ["-c", CLI, "--help"]),
    ("clearway build --help", ["-c", CLI, "build", "--help"]),
    ("clearway layers clinic.dxf", ["-c", CLI, "layers", str(SAMPLES / "clinic.dxf")]),
    ("import every stage (each command before)", ["-c", EVERY_STAGE]),
]


def cpu_of_children() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def time_command(arguments: list[str], runs: int) -> tuple[list[float], list[float]]:
    """Return the wall-clock and the CPU seconds of each run."""
    wall, cpu = [], []
    for _ in range(runs):
        cpu_before, start = cpu_of_children(), time.perf_counter()
        subprocess.run([sys.executable, *arguments], check=True, stdout=subprocess.DEVNULL,
                       stderr=subprocess.DEVNULL)
        wall.append(time.perf_counter() - start)
        cpu.append(cpu_of_children() - cpu_before)
    return wall, cpu


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=9, help="runs per command (default 9)")
    runs = parser.parse_args().runs
    compile_sources()                                       # as an installed copy has it
    time_command(COMMANDS[0][1], 2)                         # warm the file cache
    rows = [(label, time_command(arguments, runs)) for label, arguments in COMMANDS]
    baseline = statistics.median(rows[0][1][0])
    print(f"start-up, {runs} runs each, seconds; load average {os.getloadavg()[0]:.1f} on "
          f"{os.cpu_count()} cores")
    print(f"{'command':<44} {'median':>7} {'fastest':>8} {'median - python':>16} "
          f"{'CPU median':>11}")
    for label, (wall, cpu) in rows:
        median = statistics.median(wall)
        print(f"{label:<44} {median:7.3f} {min(wall):8.3f} {median - baseline:16.3f} "
              f"{statistics.median(cpu):11.3f}")


if __name__ == "__main__":
    main()
