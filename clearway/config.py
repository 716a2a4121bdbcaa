"""The TOML config file: layer roles, drawing options, robot and checks.

    [layers]                      # each a list of glob patterns, matched case-insensitively
    openings = ["A-DOOR*", "A-GLAZ*"]
    stairs = ["A-FLOR-STRS*"]
    walls = ["A-WALL*"]
    racking = ["*RACK*"]
    keepout = ["*KEEPOUT*"]
    boundary = ["A-FLOR-OTLN*"]
    stations = ["*STATION*"]
    shared = ["*SHARED*"]

    [drawing]
    units = "mm"                  # overrides $INSUNITS
    chord_tolerance = 0.001       # metres
    gap_tolerance = 0.01          # metres
    max_wall_thickness = 0.6      # metres
    nominal_wall_thickness = 0.05 # metres
    label_radius = 3.0            # metres

    [robot]
    radius = 0.35                 # or: length = 1.0, width = 0.6
    margin = 0.10
    kind = "differential"         # or "car" (needs turn_radius) or "omni"
    centre_offset = [0.0, 0.0]    # rotation centre from the rectangle's centre, metres
                                  # (forward, left); a tugger's rear axle: [-0.5, 0.0]
    turn_radius = 2.0             # car: smallest turning radius of the rotation centre, m
    reverse = true                # car: may it back up

    [checks]
    comfort_clearance = 0.6       # metres; pinch points below it
    personnel_clearance = 0.5     # metres
    low_clearance_penalty = 0.0   # extra weight factor for lanes below comfort

    [limits]                      # resource limits; see clearway.limits.Limits
    max_extent = 20000.0          # metres

Command-line options override the file, key by key.
"""

from __future__ import annotations

import dataclasses
import typing
from pathlib import Path
from typing import Any

from clearway.errors import ConfigError
from clearway.limits import Limits


def _limit_types() -> dict[str, type | tuple[type, ...]]:
    """The [limits] keys and value types, from the Limits dataclass (one definition)."""
    hints = typing.get_type_hints(Limits)
    return {item.name: int if hints[item.name] is int else (int, float)
            for item in dataclasses.fields(Limits)}


#: Every section and key the file may hold, with the type each value must have.
SCHEMA: dict[str, dict[str, type | tuple[type, ...]]] = {
    "layers": {name: list for name in
               ("openings", "stairs", "walls", "racking", "keepout", "boundary", "stations",
                "shared")},
    "drawing": {"units": str, "chord_tolerance": (int, float), "gap_tolerance": (int, float),
                "max_wall_thickness": (int, float), "nominal_wall_thickness": (int, float),
                "label_radius": (int, float), "region": list},
    "robot": {"radius": (int, float), "length": (int, float), "width": (int, float),
              "margin": (int, float), "kind": str, "centre_offset": list,
              "turn_radius": (int, float), "reverse": bool},
    "checks": {"comfort_clearance": (int, float), "personnel_clearance": (int, float),
               "low_clearance_penalty": (int, float)},
    "limits": _limit_types(),
}

#: The default of every [robot] and [checks] setting that has one, metres (the penalty is a
#: factor). The only place they are written: build_roadmap's keyword defaults, compare and
#: the command line's help read them from here.
DEFAULTS: dict[str, dict[str, float]] = {
    "robot": {"radius": 0.35, "margin": 0.10},
    # 0.5 m from memory of ISO 3691-4's clear zone beside driverless trucks
    "checks": {"personnel_clearance": 0.5, "low_clearance_penalty": 0.0},
}

#: Default [checks] comfort_clearance above the required clearance (radius + margin), metres.
COMFORT_ALLOWANCE = 0.2


def default_comfort_clearance(required: float) -> float:
    """Return the default comfort clearance for a required clearance, metres.

    Examples
    --------
    >>> default_comfort_clearance(0.45)
    0.65
    """
    return float(required) + COMFORT_ALLOWANCE


#: Comfort clearance for a graph that does not state its required clearance: the default
#: robot's, metres.
DEFAULT_COMFORT = default_comfort_clearance(DEFAULTS["robot"]["radius"]
                                            + DEFAULTS["robot"]["margin"])


def load_config(path: str | Path | None) -> dict[str, dict[str, Any]]:
    """Read and validate a config file; return {section: {key: value}} (empty for None).

    Raises
    ------
    ConfigError
        The file is missing, not TOML, or holds an unknown key or a value of the wrong type.
    """
    config: dict[str, dict[str, Any]] = {section: {} for section in SCHEMA}
    if path is None:
        return config
    import tomllib                    # only when there is a file: keeps start-up short
    path = Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ConfigError(f"{path}: config file not found") from None
    except (OSError, UnicodeDecodeError) as err:
        raise ConfigError(f"{path}: cannot read config file ({err})") from None
    except tomllib.TOMLDecodeError as err:
        raise ConfigError(f"{path}: not valid TOML ({err})") from None
    for section, values in data.items():
        if section not in SCHEMA or not isinstance(values, dict):
            raise ConfigError(f"{path}: unknown section [{section}]; "
                              f"expected one of {', '.join(SCHEMA)}")
        for key, value in values.items():
            expected = SCHEMA[section].get(key)
            if expected is None:
                raise ConfigError(f"{path}: unknown key {key!r} in [{section}]")
            if not isinstance(value, expected) or (isinstance(value, bool)
                                                   and expected is not bool):
                raise ConfigError(f"{path}: [{section}] {key} has the wrong type: {value!r}")
            if section == "layers" and not all(isinstance(item, str) for item in value):
                raise ConfigError(f"{path}: [{section}] {key} must be a list of strings")
            if key == "centre_offset" and not (len(value) == 2 and all(
                    isinstance(item, (int, float)) and not isinstance(item, bool)
                    for item in value)):
                raise ConfigError(f"{path}: [{section}] {key} must be two numbers "
                                  "[forward, left] in metres")
            config[section][key] = value
    return config
