"""Plain values that leave the roadmap stage: the robot, the findings, the roadmap."""

from __future__ import annotations

import math
from decimal import Decimal
from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING

from shapely.geometry.base import BaseGeometry

from clearway.roadmap.choices import ROBOT_KINDS

if TYPE_CHECKING:   # annotations only: `build` makes a Robot before it forks the reader,
    import networkx as nx   # which has no use for networkx (0.13 s to import)

#: Node kinds, as written to every export.
NODE_KINDS = ("junction", "end", "station", "link", "waypoint")



def _check_length(name: str, value: float, *, zero: bool = False) -> float:
    if not (math.isfinite(value) and (value >= 0 if zero else value > 0)):
        raise ValueError(f"robot {name} must be {'>=' if zero else '>'} 0 m, got {value}")
    return float(value)


def _decimal_sum(*values: float) -> float:
    """Sum floats as the decimals they print as (repr), rounded once to the nearest float."""
    return float(sum(Decimal(repr(float(value))) for value in values))


@dataclass(frozen=True)
class Robot:
    """The robot's footprint, how it turns, and the safety margin; lengths in metres.

    A disc robot has ``length = width = None``. A rectangular robot has a length (along its
    heading) and a width; ``centre`` is its rotation centre (the point that follows the
    lane: the middle of the drive axle, a tugger's rear axle) as (forward, left) offsets
    from the rectangle's centre. ``kind`` is one of ROBOT_KINDS: "differential" turns in
    place about ``centre``, "car" drives arcs of radius >= ``turn_radius`` (measured at
    ``centre``) and may back up when ``reverse``, "omni" may move in any direction and turns
    in place about the rectangle's centre.

    The lanes are kept where the body fits heading along them: ``clearance`` is the side
    clearance the lane needs, half the width (plus the rotation centre's sideways offset)
    plus the margin; for a disc it is radius + margin. ``radius`` of a rectangle is the
    circumscribed radius ``hypot(length, width) / 2`` (reported, not used for lanes).
    """

    radius: float
    margin: float
    length: float | None = None
    width: float | None = None
    kind: str = "differential"
    centre: tuple[float, float] = (0.0, 0.0)
    turn_radius: float = 0.0
    reverse: bool = True

    def __post_init__(self) -> None:
        if self.kind not in ROBOT_KINDS:
            raise ValueError(f"robot kind must be one of {', '.join(ROBOT_KINDS)}, "
                             f"got {self.kind!r}")
        if self.kind == "car":
            _check_length("turn radius", self.turn_radius)
        elif self.turn_radius:
            raise ValueError(f"a turn radius is for a car robot, not {self.kind!r}")
        if self.centre != (0.0, 0.0):
            if self.length is None or self.kind == "omni":
                raise ValueError(f"{'a disc' if self.length is None else 'an omni'} robot "
                                 "turns about its centre; give no offset")
            forward, left = self.centre
            if not (abs(forward) <= self.length / 2 and abs(left) <= self.width / 2):
                raise ValueError(f"rotation centre ({forward}, {left}) m lies outside the "
                                 f"{self.length:g} m x {self.width:g} m footprint")

    @classmethod
    def disc(cls, radius: float, *, margin: float, kind: str = "differential",
             turn_radius: float = 0.0, reverse: bool = True) -> "Robot":
        if not (math.isfinite(radius) and radius > 0):
            raise ValueError(f"robot radius must be > 0 m, got {radius}")
        if not (math.isfinite(margin) and margin >= 0):
            raise ValueError(f"margin must be >= 0 m, got {margin}")
        return cls(radius=float(radius), margin=float(margin), kind=kind,
                   turn_radius=float(turn_radius), reverse=bool(reverse))

    @classmethod
    def rectangle(cls, length: float, width: float, *, margin: float,
                  kind: str = "differential", centre: tuple[float, float] = (0.0, 0.0),
                  turn_radius: float = 0.0, reverse: bool = True) -> "Robot":
        for name, value in (("length", length), ("width", width)):
            if not (math.isfinite(value) and value > 0):
                raise ValueError(f"robot {name} must be > 0 m, got {value}")
        if not (math.isfinite(margin) and margin >= 0):
            raise ValueError(f"margin must be >= 0 m, got {margin}")
        forward, left = (float(value) for value in centre)
        if not (math.isfinite(forward) and math.isfinite(left)):
            raise ValueError(f"rotation centre must be finite, got {centre}")
        return cls(radius=math.hypot(length, width) / 2, margin=float(margin),
                   length=float(length), width=float(width), kind=kind,
                   centre=(forward, left), turn_radius=float(turn_radius),
                   reverse=bool(reverse))

    @property
    def clearance(self) -> float:
        """Required lane clearance c, metres: radius + margin, or for a rectangle heading
        along the lane half its width + the rotation centre's sideways offset + margin.

        Added in decimal, as a person adds the values typed: 0.35 + 0.1 is 0.45 (binary
        addition gives 0.44999999999999996, one unit in the last place lower).
        """
        if self.length is None:
            return _decimal_sum(self.radius, self.margin)
        return _decimal_sum(self.width / 2, abs(self.centre[1]), self.margin)

    @property
    def least_gap(self) -> float:
        """The smallest clear distance a move may leave beside the body, metres: the margin
        less a nanometre for rounding. With no margin a body may touch an obstacle but not
        cross it: GEOS measures 0 for both, and body.hull_gaps tells them apart."""
        return self.margin - 1e-9

    def short_beside(self, gap: float) -> str:
        """What a move whose gap beside the body is `gap` (metres) lacks, for a note:
        "needs 0.10 m beside the body, has 0.04 m", or with no margin that it meets an
        obstacle."""
        if self.margin > 0:
            return f"needs {self.margin:.2f} m beside the body, has {max(gap, 0.0):.2f} m"
        return "the body crosses an obstacle (no margin is set)"

    def kept_beside(self, gap: float) -> str:
        """What no manoeuvre tried keeps, and the best one's gap `gap` (metres), for a note:
        "0.10 m beside the body (the best leaves at most 0.04 m)", or with no margin "the
        body clear of the obstacles"."""
        if self.margin > 0:
            return (f"{self.margin:.2f} m beside the body (the best leaves at most "
                    f"{max(gap, 0.0):.2f} m)")
        return "the body clear of the obstacles"

    @property
    def half_width(self) -> float:
        """Half the robot's width across its direction of travel, metres."""
        return self.width / 2 if self.width is not None else self.radius

    @property
    def swing(self) -> float:
        """Radius of the circle the body sweeps turning in place about its rotation
        centre, metres."""
        if self.length is None:
            return self.radius
        forward, left = self.centre
        return math.hypot(self.length / 2 + abs(forward), self.width / 2 + abs(left))

    @property
    def has_body(self) -> bool:
        """True when lanes and turns need the body checks (a rectangle, or a car); a disc
        turning in place is fully described by its clearance."""
        return self.length is not None or self.kind == "car"

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
    room: str = ""           # id of the room it stands in, "" when none
    #: metres from the drawn point to its node: a block in the clearance band stands clear
    standoff: float = 0.0


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
    #: indices of the two drivable regions it joins (build-internal; not exported)
    regions: tuple[int, ...] = field(default=(), repr=False, compare=False)


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
class BodyShortfall:
    """A lane the robot's body cannot drive heading along it, or a turn it cannot make.

    what : "lane" (dropped or cut back), "link" (a station's approach), "turn" (between
        two edges at a node) or "turn round" (at a dead end)
    needs, has : metres; for lanes the clear distance beside the body (the margin) and the
        smallest found; for turns the clear radius needed about the turning point and the
        clearance there
    """

    what: str
    x: float
    y: float
    needs: float
    has: float
    edges: tuple[str, ...] = ()
    node: str = ""
    note: str = ""           # what is short, one line


@dataclass(frozen=True)
class Passage:
    """Where two rooms meet: an opening of the drawing or a narrowing of the lanes.

    opening is the index into ``FloorPlan.openings``, -1 for a narrowing. x, y is the
    middle, width the clear width (metres); start, end the cut line (drawing frame);
    fits says the robot passes (width above twice the required clearance); rooms are the
    ids of the rooms either side (one for an exterior opening, none when outside every room).
    """

    x: float
    y: float
    width: float
    opening: int
    fits: bool
    rooms: tuple[str, ...] = ()
    start: tuple[float, float] = (0.0, 0.0)
    end: tuple[float, float] = (0.0, 0.0)
    id: str = ""             # "o<k>" for opening k of the drawing, "c<k>" for a narrowing
    kind: str = "narrowing"  # the opening's kind (door, window, closed, open) or narrowing
    exterior: bool = False

    @property
    def passable(self) -> bool:
        """The robot passes: a door, an open gap or a narrowing, wide enough for it."""
        return self.kind in ("door", "open", "narrowing") and self.fits


@dataclass(frozen=True)
class Room:
    """A room of the free floor, its names from the drawing and how the robot enters it.

    polygon is in the drawing frame; x, y is the room node (the lane vertex of greatest
    clearance inside it) or, for a room without one, a point inside. node is the graph node
    id of the room node ("" when none). passages are indices into ``Roadmap.passages`` on
    the room's outline. For a room the robot cannot enter, reason says why and blocked_by
    is the passage that stops it (-1 when none does), blocked_width its clear width.
    """

    id: str
    polygon: BaseGeometry
    names: tuple[str, ...]
    area: float
    x: float
    y: float
    node: str
    reachable: bool
    passages: tuple[int, ...] = ()
    reason: str = ""
    blocked_by: int = -1
    blocked_width: float | None = None


@dataclass(frozen=True)
class Findings:
    stations: tuple[StationResult, ...] = ()
    components: tuple[tuple[str, ...], ...] = ()          # station labels per graph component
    unreachable_pairs: tuple[tuple[str, str], ...] = ()
    pinch_points: tuple[PinchPoint, ...] = ()
    narrow_passages: tuple[NarrowPassage, ...] = ()
    personnel: tuple[PersonnelFlag, ...] = ()
    body: tuple[BodyShortfall, ...] = ()
    warnings: tuple[str, ...] = ()
    personnel_clearance: float | None = None   # the side clearance required, metres


@dataclass(frozen=True)
class Roadmap:
    """The lane graph and what was found while building it.

    graph : networkx.MultiGraph
        Undirected; node ids are strings; node attributes x, y, clearance (float, m),
        kind (one of NODE_KINDS), label (str, "" unless a station), room (str, the id of the
        room it stands in, "" outside every room). Edge keys are edge
        ids (str); edge attributes length, weight, clearance_min (float, m) and geometry
        (shapely LineString joining the two end nodes, in either direction).
        Graph attributes: units="m", robot_radius, margin, required_clearance
        (radius + margin) (floats, m).
    robot : Robot
    drivable : shapely geometry
        Where the robot's centre may be: free space minus :attr:`inflated`.
    findings : Findings
    rooms : tuple of Room
        Sorted by id (``r<k>`` in (x, y) order of the room nodes).
    passages : tuple of Passage
        One per opening of the drawing, in its order, then one per narrowing.
    obstacles : tuple of shapely geometry
        The obstacles (walls, racking, keep-out zones, the boundary's band) that
        :attr:`inflated` grows.
    """

    graph: nx.MultiGraph
    robot: Robot
    drivable: BaseGeometry
    findings: Findings = field(default_factory=Findings)
    rooms: tuple[Room, ...] = ()
    passages: tuple[Passage, ...] = ()
    obstacles: tuple[BaseGeometry, ...] = ()

    @cached_property
    def inflated(self) -> BaseGeometry:
        """The obstacles grown by the required clearance, as one geometry.

        Made when first asked for: no output draws it (the preview draws `drivable`), and
        the union of a large warehouse's obstacles takes about a second.
        """
        from clearway.roadmap.inflate import inflate_obstacles
        return inflate_obstacles(self.obstacles, self.robot.clearance)

    @property
    def openings(self) -> tuple[Passage, ...]:
        """Every passage: the drawing's openings, then the narrowings between rooms."""
        return self.passages
