"""Benchmark suite: whole `clearway build` processes on every warehouse style, against ezdxf.

    python benchmarks/bench_suite.py [--styles a,b] [--repeats N] [--keep DIR] [BAYS ...]
                                     (default: every style at 5000 10000 20000 bays)

Every style of :data:`benchmarks.synthetic.STYLES` is written at each size (deterministic
drawings; with ``--keep DIR`` they and the outputs stay in DIR, for before/after diffs). Per
drawing, N times in turn (default 3): a bare parse process (``python -c "ezdxf.readfile"``)
and a whole ``python -m clearway build`` process, measured side by side. The build's stage
times come from its own progress lines on stderr, time-stamped as they arrive:

- start: interpreter start-up and every import the build makes (a process importing the
  modules a build of the first drawing left loaded, run beside each build);
- conv: the rest of the time until the drawing is read (``read_floorplan``);
- prep, infl, vor, rooms, graph, stat, chk: the stages of build_roadmap;
- out: rendering and writing the four outputs, to the process's exit.

It prints the medians, total / parse, the peak memory of the build process (its RSS
high-water mark, from ``os.wait4``), total / parse also in CPU time and, between consecutive sizes of a style, the growth of
time and memory. Targets (issue 11, 2 shared cores): total within 3 x parse at about 5,000
bays and 4 x at about 20,000; twice the bays (and floor area) at most 2.3 x the time and
2.2 x the peak memory; under 800 MiB at 20,000 bays. The machine is shared and noisy:
compare ratios within one run, never single timings.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from benchmarks.bytecode import compile_sources  # noqa: E402
from benchmarks.synthetic import STYLES  # noqa: E402

PARSE = "import sys, ezdxf; ezdxf.readfile(sys.argv[1])"
#: Writes one suite drawing (argv: path, style, bays) in a process of its own: on Linux a child
#: starts with the peak memory of its parent, so drawings written here would inflate every
#: build's peak after them.
WRITE = (f"import sys; sys.path.insert(0, {str(ROOT)!r}); "
         "from benchmarks.synthetic import write_style; "
         "write_style(sys.argv[1], sys.argv[2], int(sys.argv[3]))")
#: A build that writes the names of the modules it loaded to argv[1] (the rest: build's arguments).
LOADED = ("import atexit, json, runpy, sys; out = sys.argv.pop(1); "
          "atexit.register(lambda: json.dump(sorted(sys.modules), open(out, 'w'))); "
          "sys.argv[0] = 'clearway'; runpy.run_module('clearway', run_name='__main__')")
#: Imports the modules named in the file argv[1]: the build's start-up without its work.
IMPORTS = ("import importlib, json, sys\n"
           "for name in json.load(open(sys.argv[1])):\n"
           "    if not name.endswith('__main__'):\n"
           "        try: importlib.import_module(name)\n"
           "        except Exception: pass")
#: Progress lines of `clearway build` that start a stage, in order, and the stage they start.
MARKS = (("read ", "prep"), ("  inflating", "infl"), ("  voronoi", "vor"),
         ("  rooms", "rooms"), ("  graph", "graph"), ("  stations", "stat"), ("  checks", "chk"),
         ("rendering ", "out"))
COLUMNS = ("start", "conv", "prep", "infl", "vor", "rooms", "graph", "stat", "chk", "out")


def run_process(command, env=None):
    """Run `command`; return (seconds, peak RSS in MiB, lines, CPU seconds).

    lines: [(seconds since start, line)] of its stderr, time-stamped as they arrive.
    """
    start = time.perf_counter()
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                               text=True, env=env)
    lines = [(time.perf_counter() - start, line.rstrip("\n")) for line in process.stderr]
    _, status, usage = os.wait4(process.pid, 0)
    seconds = time.perf_counter() - start
    process.returncode = os.waitstatus_to_exitcode(status)
    if process.returncode not in (0, 1):
        raise RuntimeError(f"{command}: exit {process.returncode}: "
                           + " | ".join(line for _, line in lines[-3:]))
    return seconds, usage.ru_maxrss / 1024, lines, usage.ru_utime + usage.ru_stime


def stage_times(seconds, lines, startup):
    """Split one build's wall time into COLUMNS by its progress lines."""
    stamps = {}
    for at, line in lines:
        for prefix, name in MARKS:
            if line.startswith(prefix) and name not in stamps:
                stamps[name] = at
    stamps["end"] = seconds
    order = [name for _, name in MARKS] + ["end"]
    for name, following in reversed(list(zip(order, order[1:]))):
        stamps.setdefault(name, stamps[following])      # a stage not printed took no time
    times = {"start": startup, "conv": stamps["prep"] - startup}
    for name, following in zip(order, order[1:]):
        times[name] = stamps[following] - stamps[name]
    return times


def loaded_modules(path, outdir, listing):
    """Build `path` once, writing the names of the modules the build loaded to `listing`."""
    run_process([sys.executable, "-c", LOADED, str(listing), "build", str(path),
                 "-o", str(outdir)])
    return listing


def measure(path, outdir, repeats, modules):
    """Medians of parse, total and stage times and the peak memory for one drawing.

    modules: a file naming the modules a build loads (:func:`loaded_modules`).
    """
    parses, totals, peaks, stages = [], [], [], {name: [] for name in COLUMNS}
    parse_cpu, total_cpu = [], []
    for _ in range(repeats):
        startup = run_process([sys.executable, "-c", IMPORTS, str(modules)])[0]
        seconds, _, _, cpu = run_process([sys.executable, "-c", PARSE, str(path)])
        parses.append(seconds)
        parse_cpu.append(cpu)
        seconds, peak, lines, cpu = run_process([sys.executable, "-m", "clearway", "build",
                                                 str(path), "-o", str(outdir)])
        totals.append(seconds)
        total_cpu.append(cpu)
        peaks.append(peak)
        for name, value in stage_times(seconds, lines, startup).items():
            stages[name].append(value)
    return {"parse": statistics.median(parses), "total": statistics.median(totals),
            "cpu_ratio": statistics.median(total_cpu) / statistics.median(parse_cpu),
            "peak": max(peaks), "size_mb": path.stat().st_size / 1e6,
            "stages": {name: statistics.median(values) for name, values in stages.items()}}


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("sizes", nargs="*", type=int, default=[5000, 10000, 20000])
    parser.add_argument("--styles", default=",".join(STYLES))
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--keep", help="folder for the drawings and outputs (kept)")
    args = parser.parse_args(argv)
    styles = args.styles.split(",")
    folder = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="clearway-suite-"))
    folder.mkdir(parents=True, exist_ok=True)
    compile_sources()
    print(f"machine: {os.cpu_count()} cores, Python {sys.version.split()[0]}; medians of "
          f"{args.repeats} on a shared, noisy machine")
    head = (f"{'style':<13}{'bays':>6}{'MB':>5}{'parse':>6}" + "".join(f"{c:>6}" for c in COLUMNS)
            + f"{'total':>7}{'/parse':>7}{'cpu/p':>6}{'MiB':>5}")
    print(head)
    rows, modules = {}, None
    for style in styles:
        for bays in args.sizes:
            path = folder / f"{style}_{bays}.dxf"
            if not path.exists():      # in a child: the peak memory children report
                run_process([sys.executable, "-c", WRITE, str(path), style, str(bays)])
            if modules is None:
                modules = loaded_modules(path, folder / f"{style}_{bays}",
                                         folder / "modules.json")
            row = measure(path, folder / f"{style}_{bays}", args.repeats, modules)
            rows[style, bays] = row
            print(f"{style:<13}{bays:>6}{row['size_mb']:>5.1f}{row['parse']:>6.2f}"
                  + "".join(f"{row['stages'][c]:>6.2f}" for c in COLUMNS)
                  + f"{row['total']:>7.2f}{row['total'] / row['parse']:>7.2f}"
                  + f"{row['cpu_ratio']:>6.2f}"
                  + f"{row['peak']:>5.0f}", flush=True)
    print("times in seconds (medians); cpu/p = the same ratio in CPU time (user + system, "
          "less disturbed by other loads); MiB = peak RSS of the build process")

    def less(row):
        return row["total"] - row["stages"]["start"]
    for style in styles:
        for a, b in zip(args.sizes, args.sizes[1:]):
            one, two = rows[style, a], rows[style, b]
            print(f"growth {style} {a} -> {b} bays (x{b / a:.1f}): time "
                  f"x{two['total'] / one['total']:.2f} (less start-up x{less(two) / less(one):.2f}), "
                  f"parse x{two['parse'] / one['parse']:.2f}, memory x{two['peak'] / one['peak']:.2f}")
    if not args.keep:
        print(f"drawings and outputs left in {folder}")


if __name__ == "__main__":
    main()
