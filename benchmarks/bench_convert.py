"""Benchmark: ezdxf's own parse against clearway's conversion, on synthetic warehouses.

    python benchmarks/bench_convert.py [BAYS ...]      (default: 1000 5000)

Parse = ezdxf's recovery read of the file's bytes (the path read_floorplan takes);
conversion = read_floorplan's total time less that parse. Target: ratio <= 1.
"""

from __future__ import annotations

import io
import statistics
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from benchmarks.synthetic import write_warehouse  # noqa: E402
from clearway.converter import read_floorplan  # noqa: E402
from clearway.converter.document import quiet_library  # noqa: E402


def median_seconds(function, repeats):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main(sizes, repeats=3):
    from ezdxf import recover
    print(f"{'bays':>6} {'parse s':>9} {'convert s':>10} {'ratio':>6} {'peak MiB':>9}")
    with tempfile.TemporaryDirectory() as folder:
        for bays in sizes:
            path = write_warehouse(Path(folder) / f"warehouse_{bays}.dxf", bays)
            data = path.read_bytes()

            def parse():
                with quiet_library():
                    recover.read(io.BytesIO(data))
            parse_time = median_seconds(parse, repeats)
            total = median_seconds(lambda: read_floorplan(path), repeats)
            tracemalloc.start()
            plan = read_floorplan(path)
            peak = tracemalloc.get_traced_memory()[1] / 2 ** 20
            tracemalloc.stop()
            convert = total - parse_time
            print(f"{bays:>6} {parse_time:>9.3f} {convert:>10.3f} {convert / parse_time:>6.2f} "
                  f"{peak:>9.1f}   racking {plan.regions['racking'].area:.1f} m2, "
                  f"free {plan.free_space.area:.1f} m2")


if __name__ == "__main__":
    main([int(value) for value in sys.argv[1:]] or [1000, 5000])
