"""Plain values that leave the roadmap stage: the robot, the findings, the roadmap."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import networkx as nx
from shapely.geometry.base import BaseGeometry

#: Node kinds, as written to every export.
NODE_KINDS = ("junction", "end", "station", "link", "waypoint")


@dataclass(frozen=True)
class Robot:
    """The robot's footprint and the safety margin, metres.

    A disc robot has ``length = width = None``. A rectangular robot is inflated by its
    circumscribed radius ``hypot(length, width) / 2`` (stated in the report).
    """

    radius: float
    margin: float
    length: float | None = None
    width: float | None = None

    @classmethod
    def disc(cls, radius: float, *, margin: float) -> "Robot":
        if not (math.isfinite(radius) and radius > 0):
            raise ValueError(f"robot radius must be > 0 m, got {radius}")
        if not (math.isfinite(margin) and margin >= 0):
            raise ValueError(f"margin must be >= 0 m, got {margin}")
        return cls(radius=float(radius), margin=float(margin))

    @classmethod
    def rectangle(cls, length: float, width: float, *, margin: float) -> "Robot":
        for name, value in (("length", length), ("width", width)):
            if not (math.isfinite(value) and value > 0):
                raise ValueError(f"robot {name} must be > 0 m, got {value}")
        if not (math.isfinite(margin) and margin >= 0):
            raise ValueError(f"margin must be >= 0 m, got {margin}")
        return cls(radius=math.hypot(length, width) / 2, margin=float(margin),
                   length=float(length), width=float(width))

    @property
    def clearance(self) -> float:
        """Required clearance c = radius + margin, metres."""
        return self.radius + self.margin

    @property
    def half_width(self) -> float:
        """Half the robot's width across its direction of travel, metres."""
        return self.width / 2 if self.width is not None else self.radius


@dataclass(frozen=True)
class StationResult:
    """How one station joined the roadmap (or why it could not)."""

    label: str
    x: float                 # drawn position, metres
    y: float
    node: str | None         # its node id, None when it could not join
    component: int | None    # graph component index (0 = the one holding most stations)
    reachable: bool
    reason: str = ""         # empty when reachable; else why not, one line


@dataclass(frozen=True)
class PinchPoint:
    x: float
    y: float
    clearance: float         # metres, exact distance to the nearest obstacle
    edge: str = ""           # edge id of the lane it lies on


@dataclass(frozen=True)
class NarrowPassage:
    """A place where raw free space connects but the inflated one does not."""

    x: float
    y: float
    width: float             # metres, the passage's clear width
    blocks: tuple[str, ...] = ()   # labels of stations this passage cuts off


@dataclass(frozen=True)
class PersonnelFlag:
    """A lane inside a zone shared with people whose side clearance is too small."""

    edge: str
    x: float                 # where the side clearance is smallest
    y: float
    clearance: float         # lane clearance there, metres
    side_clearance: float    # clearance minus the robot's half-width, metres
    required: float          # the configured minimum, metres


@dataclass(frozen=True)
class Findings:
    stations: tuple[StationResult, ...] = ()
    components: tuple[tuple[str, ...], ...] = ()          # station labels per graph component
    unreachable_pairs: tuple[tuple[str, str], ...] = ()
    pinch_points: tuple[PinchPoint, ...] = ()
    narrow_passages: tuple[NarrowPassage, ...] = ()
    personnel: tuple[PersonnelFlag, ...] = ()
    warnings: tuple[str, ...] = ()
    personnel_clearance: float | None = None   # the side clearance required, metres


@dataclass(frozen=True)
class Roadmap:
    """The lane graph and what was found while building it.

    graph : networkx.MultiGraph
        Undirected; node ids are strings; node attributes x, y, clearance (float, m),
        kind (one of NODE_KINDS), label (str, "" unless a station). Edge keys are edge
        ids (str); edge attributes length, weight, clearance_min (float, m) and geometry
        (shapely LineString joining the two end nodes, in either direction).
        Graph attributes: units="m", robot_radius, margin, clearance (floats, m).
    robot : Robot
    inflated : shapely geometry
        The obstacles grown by the required clearance.
    drivable : shapely geometry
        Where the robot's centre may be: free space minus ``inflated``.
    findings : Findings
    """

    graph: nx.MultiGraph
    robot: Robot
    inflated: BaseGeometry
    drivable: BaseGeometry
    findings: Findings = field(default_factory=Findings)
