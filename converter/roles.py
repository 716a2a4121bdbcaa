"""Layer roles: which layers hold walls, racking, keep-out zones, boundary, stations, shared zones."""

from __future__ import annotations

from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from types import MappingProxyType
from typing import Mapping

from clearway.converter.floorplan import ROLES

#: Default glob patterns per role, matched case-insensitively. The wall and outline
#: patterns follow the AIA / US National CAD Standard layer names (A-WALL, A-COLS,
#: A-FLOR-OTLN); the others match the words a facility team puts in a layer name.
DEFAULT_ROLE_PATTERNS: Mapping[str, tuple[str, ...]] = MappingProxyType({
    "wall": ("A-WALL*", "S-WALL*", "A-COLS*", "S-COLS*", "WALL*", "COLUMN*"),
    "racking": ("*RACK*", "*SHELV*", "*PALLET*"),
    "keepout": ("*KEEPOUT*", "*KEEP-OUT*", "*KEEP_OUT*", "*NOGO*", "*NO-GO*"),
    "boundary": ("A-FLOR-OTLN*", "*BOUNDARY*"),
    "station": ("*STATION*", "*-STN*", "STN-*"),
    "shared": ("*SHARED*", "*WALKWAY*", "*PEDESTRIAN*"),
})

#: Role -> the option / config key that sets it (``--walls``, ``[layers] walls = [...]``).
ROLE_OPTION_NAMES: Mapping[str, str] = MappingProxyType({
    "wall": "walls", "racking": "racking", "keepout": "keepout",
    "boundary": "boundary", "station": "stations", "shared": "shared",
})


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
        """Return the role of `layer_name` (case-insensitive), or None when no pattern matches."""
        name = str(layer_name).upper()
        for role in ROLES:
            if any(fnmatchcase(name, pattern.upper()) for pattern in self.patterns[role]):
                return role
        return None
