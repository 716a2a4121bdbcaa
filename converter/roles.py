"""Layer roles: which layers hold walls, racking, keep-out zones, boundary, stations, shared zones."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from types import MappingProxyType
from typing import Mapping

from clearway.converter.floorplan import ROLES

#: Floor-standing equipment (``A-EQPM``, ``MACHINES``, ``CONVEYOR``) is a keep-out zone by
#: default: lanes must not run through a machine that nothing else on the plan marks. The
#: equipment words give way to the station words (``A-EQPM-STATION`` holds docking points,
#: not machines) and to overhead (``CONVEYOR-OVHD``); keep-out's own words never do.
EQUIPMENT_PATTERNS = ("*EQPM*", "*EQUIP*", "*MACHIN*", "*MASCHIN*", "*CONVEY*")

#: Default glob patterns per role, matched case-insensitively against the layer name and
#: against the name left after an external-reference prefix (``SITE$0$A-WALL``,
#: ``SITE|A-WALL``). They cover the US National CAD Standard / AIA layer names (A-WALL,
#: A-DOOR, A-GLAZ, A-FLOR-STRS, A-COLS, S-COLS, A-FLOR-OTLN) and the plain words offices
#: use in English, French, German, Spanish, Portuguese, Italian and Dutch, which also appear in the
#: descriptive fields of ISO 13567 and BS 1192 names ("A-325G - Internal Doors"), and the
#: Chinese, Japanese and Korean words for wall, column, door, window and stair. Numeric
#: classification codes alone are not matched: schemes number differently (a CI/SfB 32 is
#: an opening, a Uniclass 320 a partition).
DEFAULT_ROLE_PATTERNS: Mapping[str, tuple[str, ...]] = MappingProxyType({
    "opening": ("*DOOR*", "*GLAZ*", "*WINDOW*", "*-WIND", "*-WIND-*", "*OPNG*", "*OPENING*",
                "*CURTAIN*", "*TÜR*", "*TUER*", "TUR", "TUR[-_ ]*", "*FENSTER*", "*PORTE*",
                "*FENETRE*", "*FENÊTRE*", "*PUERTA*", "*VENTANA*", "*FINESTR*", "*DEUR*",
                "*RAAM*", "*RAMEN*", "*APERTUR*", "*INFISS*", "*SERRAMENT*", "*ABERTUR*",
                "*ESQUADRI*", "*MENUISER*", "PORTA", "PORTA[-_ ]*", "*[-_ ]PORTA", "*PORTAS*",
                "*JANELA*", "*门*", "*窗*", "*幕墙*", "*建具*", "*ドア*", "*窓*", "*창호*"),
    "stair": ("*STAIR*", "*STRS*", "*TREPPE*", "*ESCALIER*", "*ESCALERA*", "*SCALA",
              "*TRAP[-_ ]*", "*TRAPPE*", "*楼梯*", "*階段*", "*계단*",
              # lifts (the car and its shaft are no floor: the robot waits in the lobby)
              "*EVTR*", "LIFT", "LIFT[-_ ]*", "*[-_ ]LIFT", "*[-_ ]LIFT[-_ ]*", "*AUFZUG*",
              "*ASCENSEUR*", "*ASCENSOR*", "*电梯*"),
    "wall": ("*WALL*", "A-COLS*", "S-COLS*", "*COLUMN*", "*-COL", "*-COL-*", "*-COLS-*",
             "WAND*", "*[-_ ]WAND*", "*WÄNDE*", "*WAENDE*", "*MAUER*", "MUR", "MURS*",
             "MUR[-_ ]*", "*[-_ ]MUR", "*[-_ ]MURS*", "*[-_ ]MUR[-_ ]*", "MURO*", "*[-_ ]MURO*",
             "*PARED*", "*PARETE*", "*PARETI*", "*MUUR*", "*MUREN*", "*STÜTZ*", "*STUETZ*",
             "*POTEAU*", "*PILAR*", "*PILLAR*", "*COLONN*", "*PARTITION*", "*CLOISON*",
             "*MURATUR*", "*TRAMEZZ*", "*TAMPONAM*", "*ALVENARI*", "*TABIQU*", "*MAMPOSTER*",
             "*MACONNER*", "*MAÇONNER*", "*墙*", "*牆*", "*柱*", "*壁*", "*벽*", "*기둥*"),
    "racking": ("*RACK*", "*SHELV*", "*SHELF*", "*SHLF*", "*PALLET*", "*REGAL*", "*RAYONNAGE*",
                "*ESTANTER*", "*SCAFFAL*", "*STELLING*"),
    "keepout": ("*KEEPOUT*", "*KEEP-OUT*", "*KEEP_OUT*", "*KEEP OUT*", "*NOGO*", "*NO-GO*",
                "*NO_GO*", "*NO GO*", "*EXCLUSION*",
                "*SPERRFL*", "*INTERDIT*", *EQUIPMENT_PATTERNS),
    "boundary": ("A-FLOR-OTLN*", "*-OTLN", "*BOUNDARY*"),
    "station": ("*STATION*", "*-STN*", "*_STN*", "STN", "STN[-_ ]*", "*CHARGER*",
                "*CHARGING*", "*CHGR*", "*CHRG*", "*DOCKING*"),
    "shared": ("*SHARED*", "*WALKWAY*", "*PEDESTRIAN*"),
})

#: Layers that the default patterns leave out although a role's word is in their name:
#: linework above or below the cut plane (overhead, hidden, heads of openings, foundations:
#: a stem wall or footing runs on under every door), demolished work, non-plotting layers
#: and structural grids (``COLUMN-GRID``, ``S-COLS-GRID``: grid lines run across the whole
#: floor and beyond it; the columns themselves sit on a column layer). Patterns the user
#: gives are not filtered.
DEFAULT_IGNORED_PATTERNS = ("*OVHD*", "*OVERHEAD*", "*HIDDEN*", "*HIDD*", "*-HEAD", "*-HEAD-*",
                            "*-ABOV*", "*-BELO*", "*-DEMO*", "*DEMOL*", "*-NPLT*", "*-IDEN*",
                            "*-TEXT*", "*-ANNO*", "*-DIMS*", "*-TAG*", "*-NOTE*", "*-ELEV*",
                            "*-SECT*", "*-SYMB*", "*FOOTER*", "*FOOTING*", "*-FTNG*", "*FNDN*",
                            "*FOUNDATION*", "*STEM-WALL*", "*STEM_WALL*", "*STEM WALL*",
                            "*STEMWALL*", "*FUNDAMENT*", "*FONDATION*", "*CIMENTACI*", "*GRID*")

#: Overhead doors (sectional and rolling dock doors, ``A-DOOR-OVHD``, ``OVERHEAD DOORS``) are
#: doors drawn in the cut plane, not linework above it: DEFAULT_IGNORED_PATTERNS do not leave
#: them out (common practice in US warehouse drawings).
OVERHEAD_DOOR_PATTERNS = ("*DOOR*OVHD*", "*OVHD*DOOR*", "*DOOR*OVERHEAD*", "*OVERHEAD*DOOR*")


def ignored_by_default(names):
    """Whether a layer named `names` (`name_candidates`) is left out by the default patterns:
    overhead, hidden, demolished, annotation linework, but not an overhead door.

    >>> [ignored_by_default(name_candidates(n)) for n in ("A-DOOR-OVHD", "A-FLOR-OVHD")]
    [False, True]
    """
    return matches_any(names, DEFAULT_IGNORED_PATTERNS) and \
        not matches_any(names, OVERHEAD_DOOR_PATTERNS)


#: Layers that the racking patterns leave out although RACK is in their name: aisle outlines
#: (``RACK-CLEAR-AISLE``: an aisle is floor) and sprinklers and lights named after the racking
#: they serve (``SPRINKLER-RACK``, ``E-LITE-RACK``: overhead). Only racking: a layer that
#: another role's word also names (``RACK-AISLE-KEEPOUT``) takes that role, so no keep-out
#: zone is ever left out by these words.
NOT_RACKING_PATTERNS = ("*AISLE*", "*SPRINK*", "E-LITE*", "*LIGHTING*")


#: Opening blocks and layers by kind: a door swings or slides (passable), a window is glazing
#: (closed like wall). Block names are matched like layer names; door blocks named by size
#: in feet and inches (``3068`` = 3'0" x 6'8") are doors too, and so are the door (M0921,
#: FM1021: 900 or 1000 wide, 2100 high) and window (C1518) codes of Chinese drawings
#: (common practice).
DOOR_PATTERNS = ("*DOOR*", "*TÜR*", "*TUER*", "TUR", "TUR[-_ ]*", "*PORTE*", "*PUERTA*", "*DEUR*",
                 "*GATE*", "*-DR-*", "DR[-_ ]*", "[1-9][0-9][6-8][0-9]",
                 "M[0-9][0-9][0-9][0-9]*", "FM*[0-9][0-9][0-9][0-9]*", "PORTA", "PORTA[-_ ]*",
                 "*[-_ ]PORTA", "*PORTAS*", "*门*", "*ドア*", "*扉*")
WINDOW_PATTERNS = ("*WINDOW*", "*-WIND", "*-WIND-*", "WIN", "WIN[-_ 0-9]*", "*WDW*", "*GLAZ*", "*CURTAIN*",
                   "*FENSTER*", "*FENETRE*", "*FENÊTRE*", "*VENTANA*", "*FINESTR*", "*RAAM*",
                   "*RAMEN*", "*JANELA*", "C[0-9][0-9][0-9][0-9]*", "*窗*", "*窓*", "*幕墙*")

#: Role -> the option / config key that sets it (``--walls``, ``[layers] walls = [...]``).
ROLE_OPTION_NAMES: Mapping[str, str] = MappingProxyType({
    "opening": "openings", "stair": "stairs",
    "wall": "walls", "racking": "racking", "keepout": "keepout",
    "boundary": "boundary", "station": "stations", "shared": "shared",
})

_XREF_PREFIX = re.compile(r"^.*\$\d+\$|^.*\|")


def name_candidates(name):
    """Return the upper-case names a layer or block is matched under: the name itself and,
    for a bound or attached external reference, the name after its prefix.

    Examples
    --------
    >>> name_candidates("SitePlan$0$A-Wall"), name_candidates("plan|Doors")
    (('SITEPLAN$0$A-WALL', 'A-WALL'), ('PLAN|DOORS', 'DOORS'))
    """
    upper = str(name).upper()
    stripped = _XREF_PREFIX.sub("", upper)
    return (upper, stripped) if stripped and stripped != upper else (upper,)


def _equipment_only(names, patterns):
    """True when only an equipment word makes the layer a keep-out zone and a station word
    names it too (``A-EQPM-STATION``): the station role takes it."""
    own = tuple(p for p in patterns["keepout"] if p not in EQUIPMENT_PATTERNS)
    return not matches_any(names, own) and matches_any(names, patterns["station"])


def _walls_and_windows(names, patterns):
    """True when a wall word and only window words among the openings' name the layer
    (``壁・窓``, ``WALLS AND WINDOWS``): the wall role takes it. Windows are closed like wall,
    while walls read as openings would leave the building open; door leaves and swings on a
    wall layer would narrow their doorways, so a door word keeps the opening role, and a
    curtain wall (``CURTAIN WALL``, ``幕墙``) is glazing: it stays an opening."""
    return (matches_any(names, patterns["wall"]) and matches_any(names, WINDOW_PATTERNS)
            and not matches_any(names, DOOR_PATTERNS + CURTAIN_WALL_PATTERNS))


#: Curtain walls: glazing named with a wall word.
CURTAIN_WALL_PATTERNS = ("*CURTAIN*", "*幕墙*")


def matches_any(names, patterns):
    """True when any of `names` (upper case) matches any glob of `patterns`."""
    return any(fnmatchcase(name, pattern.upper()) for name in names for pattern in patterns)


def opening_kind(name):
    """Return "door" or "window" for a layer or block name that says which, else None.

    Examples
    --------
    >>> opening_kind("A-DOOR"), opening_kind("X$0$A-GLAZ-CURT"), opening_kind("3068"), opening_kind("A-WALL")
    ('door', 'window', 'door', None)
    """
    names = name_candidates(name)
    if matches_any(names, WINDOW_PATTERNS):
        return "window"
    if matches_any(names, DOOR_PATTERNS):
        return "door"
    return None


@dataclass(frozen=True)
class Roles:
    """Glob patterns per layer role; the first role (in ROLES order) that matches wins.

    Attributes
    ----------
    patterns : mapping of str to tuple of str
        Role -> glob patterns (``*``, ``?``, ``[...]``), matched case-insensitively.
    explicit : frozenset of str
        Roles whose patterns the user gave (options or config file) rather than defaults.

    Examples
    --------
    >>> roles = Roles.from_options(racking=["SHELF*"])
    >>> roles.role_of("a-wall-extr"), roles.role_of("Shelf-01"), roles.role_of("A-RACK")
    ('wall', 'racking', None)
    >>> roles.role_of("SITE$0$Mauer"), roles.role_of("plan|A-DOOR"), roles.role_of("A-WALL-OVHD")
    ('wall', 'opening', None)
    >>> roles.role_of("COLUMN-GRID"), roles.role_of("COLUMNS")
    (None, 'wall')
    >>> roles.role_of("_0-9_壁__窓"), roles.role_of("Walls and windows"), roles.role_of("WALL-DOOR")
    ('wall', 'wall', 'opening')
    >>> roles.role_of("A-CURTAIN-WALL"), roles.role_of("幕墙")
    ('opening', 'opening')
    """

    patterns: Mapping[str, tuple[str, ...]] = field(default_factory=lambda: DEFAULT_ROLE_PATTERNS)
    explicit: frozenset = frozenset()

    def __post_init__(self):
        unknown = set(self.patterns) - set(ROLES)
        if unknown:
            raise ValueError(f"unknown layer role(s) {sorted(unknown)}; expected {ROLES}")
        full = {role: tuple(self.patterns.get(role, ())) for role in ROLES}
        object.__setattr__(self, "patterns", MappingProxyType(full))
        object.__setattr__(self, "explicit", frozenset(self.explicit))

    @classmethod
    def from_options(cls, **options):
        """Return the default roles with the given roles replaced.

        Parameters
        ----------
        **options : iterable of str or None
            Keyed by role (``wall``) or option name (``walls``); None or empty keeps the default.
        """
        by_name = {name: role for role, name in ROLE_OPTION_NAMES.items()}
        patterns = dict(DEFAULT_ROLE_PATTERNS)
        explicit = set()
        for key, values in options.items():
            role = by_name.get(key, key)
            if role not in ROLES:
                raise ValueError(f"unknown layer role {key!r}; expected one of "
                                 f"{', '.join(ROLE_OPTION_NAMES.values())}")
            if values:
                if isinstance(values, str):
                    values = [values]
                patterns[role] = tuple(str(value) for value in values)
                explicit.add(role)
        return cls(patterns, frozenset(explicit))

    def role_of(self, layer_name):
        """Return the role of `layer_name` (case-insensitive), or None when no pattern matches.

        Roles whose patterns the user gave are tried first, then the others in ROLES order.
        The name after an external-reference prefix (``XREF$0$NAME``, ``XREF|NAME``) is
        matched too. A layer that only a default pattern matches is left out when it also
        matches DEFAULT_IGNORED_PATTERNS (overhead, hidden, demolished, annotation), and
        from racking when it matches NOT_RACKING_PATTERNS (aisles, overhead services).
        """
        names = name_candidates(layer_name)
        ignored = None
        # the user's own patterns first: a layer they named wins over any default
        for role in sorted(ROLES, key=lambda role: role not in self.explicit):
            if matches_any(names, self.patterns[role]):
                if role not in self.explicit:
                    if ignored is None:
                        ignored = ignored_by_default(names)
                    if ignored or (role == "racking" and
                                   matches_any(names, NOT_RACKING_PATTERNS)):
                        continue
                    if role == "keepout" and _equipment_only(names, self.patterns):
                        continue
                    if role == "opening" and _walls_and_windows(names, self.patterns):
                        continue
                return role
        return None
