"""The plain value that crosses from the converter to the roadmap stage."""

from __future__ import annotations

from dataclasses import dataclass, fields
from types import MappingProxyType
from typing import TYPE_CHECKING, Mapping

if TYPE_CHECKING:      # annotations only: the command line reads ROLES without loading shapely
    from shapely.geometry import MultiPolygon

#: Layer roles, in the order a layer's role is decided when patterns overlap. Openings
#: (doors, windows, glazing) are never obstacles themselves: they tell what fills a gap in
#: the walls. Stairs are impassable and join the keep-out areas.
ROLES = ("opening", "stair", "wall", "racking", "keepout", "boundary", "station", "shared")
#: Roles whose geometry is an obstacle for the robot.
OBSTACLE_ROLES = ("wall", "racking", "keepout", "boundary")


@dataclass(frozen=True)
class Station:
    """A dock, charger or pick station: its label and drawn position, metres.

    kind : what the station is: a TYPE (or KIND) attribute of its block as written, else
        "dock", "charger" or "pick" when the block name or the label says so, else the
        block name; "" for a station drawn as a point or circle without such a word.
    heading : the direction the station's block faces, degrees counter-clockwise from the
        drawing's +X axis in [0, 360) (the block's rotation); None when not a block.
    """

    label: str
    x: float
    y: float
    kind: str = ""
    heading: float | None = None


#: Words for DXF entity types in messages ("3 circles"), plural given where "s" is wrong.
_ENTITY_WORDS = {"LWPOLYLINE": "polyline", "POLYLINE": "polyline", "INSERT": "block",
                 "MTEXT": "text", "3DFACE": "face"}
_PLURALS = {"hatch": "hatches", "text": "texts", "mesh": "meshes"}


@dataclass(frozen=True)
class LeftOutLayer:
    """A visible layer holding linework or points that no role takes: not in the plan.

    Attributes
    ----------
    name : str
    entities : tuple of (str, int)
        Its model-space entities, (DXF type, count), by type; empty when its linework
        comes only from inside blocks placed on other layers.
    default_role : str
        The role a default pattern names it for ("" when none does).
    ignored : bool
        Its name says overhead, hidden, demolished or annotation linework, which the
        defaults leave out on purpose (``roles.DEFAULT_IGNORED_PATTERNS``), even when a
        role's word is in it too.
    replaced_by : str
        The option whose patterns replaced its default role (``"--walls"``), else "".
    """

    name: str
    entities: tuple[tuple[str, int], ...]
    default_role: str = ""
    ignored: bool = False
    replaced_by: str = ""

    @property
    def holds(self) -> str:
        """What the layer holds in words, "3 circles and 1 polyline".

        Examples
        --------
        >>> LeftOutLayer("A-COLS", (("CIRCLE", 3), ("LWPOLYLINE", 1))).holds
        '3 circles and 1 polyline'
        """
        counts: dict[str, int] = {}
        for dxftype, count in self.entities:
            word = _ENTITY_WORDS.get(dxftype, dxftype.lower())
            counts[word] = counts.get(word, 0) + count
        words = [f"{count} {word if count == 1 else _PLURALS.get(word, word + 's')}"
                 for word, count in sorted(counts.items(), key=lambda item: (-item[1], item[0]))]
        if not words:
            return "linework inside blocks"
        return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]


@dataclass(frozen=True)
class Leak:
    """A place where free space escapes to the outside of the drawing.

    x, y : the middle of the gap, metres.  width : the gap's width, metres.
    """

    x: float
    y: float
    width: float


#: Kinds of opening: a door (passable; its leaf and swing are never obstacles), a window and
#: a closed opening (an overhead or locked door: a line straight across), both closed like
#: wall, and an open gap with nothing drawn in it (passable).
OPENING_KINDS = ("door", "window", "closed", "open")


@dataclass(frozen=True)
class Opening:
    """A gap in the walls between two wall ends (jambs) that face each other, metres.

    Attributes
    ----------
    x, y : float
        The middle of the gap.
    width : float
        Clear width, jamb to jamb.
    kind : str
        One of OPENING_KINDS.
    exterior : bool
        The opening is in the building's envelope (it leads outside).
    start, end : (float, float)
        The line across the gap from one jamb to the other, along the wall; cutting the
        floor along it separates the spaces the opening joins.
    depth : float
        Thickness of the wall at the opening (the jambs' length).
    """

    x: float
    y: float
    width: float
    kind: str
    exterior: bool
    start: tuple[float, float]
    end: tuple[float, float]
    depth: float = 0.0

    @property
    def passable(self) -> bool:
        """Doors and open gaps can be passed (by a robot that fits); windows cannot."""
        return self.kind in ("door", "open")


@dataclass(frozen=True)
class PlanText:
    """A text of the drawing (TEXT, MTEXT or a block attribute) at its insertion point, metres.

    height : the text height, metres (0 when the drawing does not say).
    """

    text: str
    x: float
    y: float
    height: float
    layer: str


@dataclass(frozen=True)
class FloorPlan:
    """A floor plan in metres, drawing frame. Immutable; no ezdxf object inside.

    Attributes
    ----------
    source : str
        The drawing's file name (no folder), for reports.
    sha256 : str
        Hex SHA-256 of the drawing file's bytes.
    units : str
        The unit the drawing was read in (a key of ``converter.units.UNITS_TO_M``).
    m_per_unit : float
        Metres per drawing unit.
    unit_note : str
        How the unit was decided, in one sentence (header, --units, or an assumption).
    regions : mapping of str to MultiPolygon
        Role -> polygons in metres, for every role in OBSTACLE_ROLES plus "shared"
        (zones shared with people). Missing roles are empty MultiPolygons.
        "boundary" is the obstacle band of the boundary outline (if drawn).
    free_space : MultiPolygon
        The navigable floor: inside the boundary (or the building's enclosing walls)
        minus every obstacle. One polygon per enclosed free-space component.
    stations : tuple of Station
        Sorted by label; labels are unique.
    leaks : tuple of Leak
        Gaps through which free space escapes to the outside of the drawing.
    warnings : tuple of str
        One line each: repaired damage, skipped entities, unit assumptions.
    extents : (xmin, ymin, xmax, ymax)
        Extents of all mapped geometry, metres.
    drawing_date : str
        When the drawing was last saved, ISO 8601 (YYYY-MM-DD), from its header
        ($TDUPDATE, else $TDCREATE); "" when the header does not say.
    openings : tuple of Opening
        Every opening found in the walls, interior and exterior, sorted by position.
    texts : tuple of PlanText
        Texts of the floor plan that was built (every layer), for naming rooms.
    repairs : tuple of str
        ezdxf's notices for the repairs its recovery made (summarised in `warnings`).
    unit_source : str
        Where the unit came from: "option", "header", "content" or "assumed".
    unit_evidence : tuple of str
        What the drawing's content says about its unit, one finding per line.
    left_out : tuple of LeftOutLayer
        Visible layers with linework or points that no role takes, by name.
    unit_doubt : str
        Why the unit --units asked for looks wrong (what the drawing measures in it and in
        the unit its header or content gives), "" when it does not; also in `warnings`.
    floor_doubt : str
        Why the floor found looks too small for the walls drawn (they may not close), ""
        when it does not; also in `warnings`.
    """

    source: str
    sha256: str
    units: str
    m_per_unit: float
    unit_note: str
    regions: Mapping[str, MultiPolygon]
    free_space: MultiPolygon
    stations: tuple[Station, ...]
    leaks: tuple[Leak, ...] = ()
    warnings: tuple[str, ...] = ()
    extents: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)
    drawing_date: str = ""
    openings: tuple[Opening, ...] = ()
    texts: tuple[PlanText, ...] = ()
    repairs: tuple[str, ...] = ()
    unit_source: str = "header"
    unit_evidence: tuple[str, ...] = ()
    left_out: tuple[LeftOutLayer, ...] = ()
    unit_doubt: str = ""
    floor_doubt: str = ""

    def __post_init__(self):
        object.__setattr__(self, "regions", MappingProxyType(dict(self.regions)))

    def __reduce__(self):
        """Pickled (a plan read in a second process comes back so) with its regions as a dict:
        a mapping proxy does not pickle."""
        return type(self), tuple(dict(self.regions) if name == "regions" else getattr(self, name)
                                 for name in (field.name for field in fields(self)))

    @property
    def obstacles(self) -> dict[str, MultiPolygon]:
        """Obstacle polygons by role (wall, racking, keepout, boundary)."""
        return {role: self.regions[role] for role in OBSTACLE_ROLES if role in self.regions}
