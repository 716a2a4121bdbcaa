"""Resource limits: the most work a drawing may ask for before clearway refuses it.

Every limit lives here, with its default, so the README's "Limits" table, the config file's
``[limits]`` section and the messages all name the same keys. A drawing over a limit is
refused with a `LimitError` whose one line names the limit and how to raise it, instead of
running out of memory or time.

    [limits]
    max_file_size = 500           # MB of DXF file
    max_extent = 20000.0          # m, largest side of the mapped geometry
    max_coordinate = 1e8          # m, largest |x| or |y| of the mapped geometry
    max_entities = 2000000        # linework parts after block expansion (MINSERT cells too)
    max_vertices = 20000000       # vertices after block expansion
    max_curve_vertices = 100000   # vertices of one flattened curve or polyline
    max_block_depth = 64          # blocks nested inside blocks
    max_boundary_length = 200000.0  # m of free-space boundary (the Voronoi stage samples it)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

from clearway.errors import ConfigError, LimitError

#: Block nesting is read recursively; deeper than this Python's own stack runs out.
DEPTH_CEILING = 400


@dataclass(frozen=True)
class Limits:
    """The resource limits of one run. Lengths in metres, sizes in MB.

    Attributes
    ----------
    max_file_size : float
        Largest DXF file read, MB (10^6 bytes); ezdxf needs about ten times as much memory.
    max_extent : float
        Largest side of the mapped (wall, racking, ...) geometry, metres. A drawing in
        millimetres read as metres is 1000 times too large and lands here.
    max_coordinate : float
        Largest absolute coordinate of the mapped geometry, metres. Survey grids stay far
        below 1e8 m (UTM northings < 1e7 m, even with a zone prefix < 1e8 m).
    max_entities : int
        Linework parts after every INSERT and MINSERT cell is expanded.
    max_vertices : int
        Vertices after expansion (16 bytes each, several copies during conversion).
    max_curve_vertices : int
        Vertices of one flattened arc, circle, ellipse, spline, hatch path or polyline.
    max_block_depth : int
        Blocks nested inside blocks (at most DEPTH_CEILING).
    max_boundary_length : float
        Total length of the free space's boundary, metres; the roadmap samples it every
        0.2 m, so 200 km means a million samples.
    """

    max_file_size: float = 500.0
    max_extent: float = 20_000.0
    max_coordinate: float = 1e8
    max_entities: int = 2_000_000
    max_vertices: int = 20_000_000
    max_curve_vertices: int = 100_000
    max_block_depth: int = 64
    max_boundary_length: float = 200_000.0

    def __post_init__(self):
        for item in fields(self):
            value = getattr(self, item.name)
            integral = item.type == "int"
            if isinstance(value, bool) or not isinstance(value, (int, float)) \
                    or not math.isfinite(value) or value <= 0 \
                    or (integral and value != int(value)):
                kind = "a whole number" if integral else "a number"
                raise ConfigError(f"[limits] {item.name} must be {kind} > 0, got {value!r}")
            if integral:
                object.__setattr__(self, item.name, int(value))
        if self.max_block_depth > DEPTH_CEILING:
            raise ConfigError(f"[limits] max_block_depth must be at most {DEPTH_CEILING}, "
                              f"got {self.max_block_depth}")

    @classmethod
    def from_config(cls, section=None) -> "Limits":
        """Return the limits of a config file's ``[limits]`` section (defaults for the rest)."""
        section = dict(section or {})
        known = {item.name for item in fields(cls)}
        unknown = sorted(set(section) - known)
        if unknown:
            raise ConfigError(f"unknown key {unknown[0]!r} in [limits]; expected one of "
                              f"{', '.join(sorted(known))}")
        return cls(**section)

    def check(self, key: str, value: float, *, subject: str, what: str, hint: str = "") -> None:
        """Raise LimitError when `value` exceeds the limit `key`.

        The message reads ``subject: what is V, over the limit key = N[; hint]; if the
        drawing really needs it, raise the limit in the --config file: [limits] key = ...``.
        """
        limit = getattr(self, key)
        if value <= limit:
            return
        raise LimitError(f"{subject}: {what} is {_number(value)}, over the limit {key} = "
                         f"{_number(limit)}{'; ' + hint if hint else ''}; if the drawing really "
                         f"needs it, raise the limit in the --config file: [limits] {key} = "
                         f"{_number(_raised(value))}")


def _number(value: float) -> str:
    if float(value).is_integer() and abs(value) < 1e15:
        return f"{int(value)}"
    return f"{value:.4g}"


def _raised(value: float) -> float:
    """A round number above `value` (1, 2 or 5 times a power of ten)."""
    if not math.isfinite(value) or value <= 0:
        return value
    power = 10.0 ** math.floor(math.log10(value))
    for step in (1, 2, 5, 10):
        if step * power >= value:
            return step * power
    return 10 * power
