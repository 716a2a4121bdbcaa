"""The robot `clearway build` is asked about: from its options, else the config file's
[robot] section, else the defaults; every value checked with a one-line message naming
the option (or the config file and key) that gave it."""

from __future__ import annotations

import math

from clearway.cli_common import InputError, Metres, setting
from clearway.config import DEFAULTS

#: Largest turning radius accepted, metres. Car-like robots that share floors with people
#: turn on a few metres (from memory: tuggers and pallet movers 1-6 m); a larger number is
#: nearly always millimetres or centimetres typed as metres.
MAX_TURN_RADIUS = 50.0


def _a(word: str) -> str:
    """The word with its indefinite article: 'a car', 'an omni'."""
    return f"{'an' if word[:1] in 'aeiou' else 'a'} {word}"


def _centre(value, name: str) -> tuple[float, float]:
    """Parse a rotation centre offset 'FORWARD,LEFT' (or a config pair) in metres."""
    parts = value.split(",") if isinstance(value, str) else list(value)
    try:
        forward, left = (float(part) for part in parts)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be FORWARD,LEFT in metres (e.g. -0.5,0), "
                         f"got {value!r}") from None
    if not (math.isfinite(forward) and math.isfinite(left)):
        raise InputError(f"{name} must be finite, got {value!r}")
    return forward, left


def _unit_hint(value: float, largest: float, scaled) -> str:
    """'lengths are in metres', with the value in millimetres or centimetres when that
    would make it plausible (`scaled(factor)` spells the option so divided)."""
    for unit, factor in (("millimetres", 1000.0), ("centimetres", 100.0)):
        if 0.1 <= value / factor <= largest:
            return f"lengths are in metres: for {unit} give {scaled(factor)}"
    return "lengths are in metres"


def _plausible(robot, given: str, scaled):
    """Return `robot`, or refuse one larger than MAX_ROBOT_SIZE across with the likely cause.

    `given` names the option and value as typed; `scaled(factor)` spells the same option
    with every length divided by `factor` (the suggestion for millimetres or centimetres).
    """
    from clearway.roadmap import MAX_ROBOT_SIZE
    across = (max(robot.length, robot.width) if robot.length is not None
              else 2 * robot.radius)
    if across <= MAX_ROBOT_SIZE:
        return robot
    raise InputError(f"{given}: a robot {across:g} m across is not plausible (over "
                     f"{MAX_ROBOT_SIZE:g} m); {_unit_hint(across, MAX_ROBOT_SIZE, scaled)}")


def _check_turn_radius(radius: float, name: str, *, half_width: float) -> None:
    """Refuse a car's turning radius that is a unit slip or puts its turning centre under
    its own body (`half_width`: the body's reach to either side of its rotation centre)."""
    if radius > MAX_TURN_RADIUS:
        spell = "--turn-radius {:g}" if name.startswith("--") else "turn_radius = {:g}"
        hint = _unit_hint(radius, MAX_TURN_RADIUS, lambda f: spell.format(radius / f))
        raise InputError(f"{name} {radius:g}: a turning radius over {MAX_TURN_RADIUS:g} m is "
                         f"not plausible; {hint}")
    if radius < half_width:
        raise InputError(f"{name} {radius:g}: a car's turning centre would lie under its "
                         f"body (it reaches {half_width:g} m to the side of its rotation "
                         "centre); a robot that turns about a point under itself is "
                         "--robot-kind differential, with --rotation-centre at that point")


def build_robot(config: dict, robot_radius, robot_size, margin, kind=None, centre=None,
                turn_radius=None, reverse=None, *, source=None):
    """The robot from the options, else from [robot] of the config file (`source`, its
    path), else the defaults."""
    from clearway.roadmap import ROBOT_KINDS, Robot
    given = config.get("robot", {})
    where = f"{source}: [robot]" if source else "[robot]"
    if robot_radius is not None and robot_size is not None:
        raise InputError("--robot-radius and --robot-size exclude each other; pass one")
    if ("length" in given) != ("width" in given):
        raise InputError(f"{where} {'length' if 'length' in given else 'width'} needs "
                         f"{'width' if 'length' in given else 'length'} too (a rectangle)")
    if "radius" in given and "length" in given:
        raise InputError(f"{where} radius and length, width exclude each other; give a "
                         "disc's radius or a rectangle's length and width")
    section = {**DEFAULTS["robot"], **given}
    if margin is None:
        margin = setting(f"{where} margin", section["margin"], Metres(allow_zero=True))
    if kind is None and section.get("kind", "differential") not in ROBOT_KINDS:
        raise InputError(f"{where} kind must be one of {', '.join(ROBOT_KINDS)}, got "
                         f"{section['kind']!r}")
    motion = {"kind": kind or section.get("kind", "differential")}
    radius_name = "--turn-radius" if turn_radius is not None else f"{where} turn_radius"
    if turn_radius is None and "turn_radius" in section:
        turn_radius = setting(radius_name, section["turn_radius"], Metres())
    if turn_radius is not None and motion["kind"] != "car":
        raise InputError(f"{radius_name} is for a car robot (--robot-kind car), not "
                         f"{_a(motion['kind'])} one")
    if turn_radius is None and motion["kind"] == "car":
        raise InputError("a car robot needs its smallest turning radius: pass --turn-radius "
                         "M (or [robot] turn_radius), metres, at its rotation centre")
    if turn_radius is not None:
        motion["turn_radius"] = turn_radius
    if motion["kind"] != "car" and (reverse is not None or "reverse" in given):
        name = "--reverse/--no-reverse" if reverse is not None else f"{where} reverse"
        raise InputError(f"{name} is for a car robot (--robot-kind car); "
                         f"{_a(motion['kind'])} robot needs no reversing to turn")
    motion["reverse"] = section.get("reverse", True) if reverse is None else reverse
    centre_name = "--rotation-centre" if centre is not None else f"{where} centre_offset"
    offset = (_centre(centre, centre_name) if centre is not None else
              _centre(section["centre_offset"], centre_name)
              if "centre_offset" in section else None)
    if offset is not None:
        motion["centre"] = offset
    if robot_size is not None:
        parts = robot_size.lower().split("x")
        if len(parts) != 2:
            raise InputError(f"--robot-size must be LENGTHxWIDTH in metres (e.g. 1.0x0.6), "
                             f"got {robot_size!r}")
        length = setting("--robot-size length", parts[0], Metres())
        width = setting("--robot-size width", parts[1], Metres())
        given_as, scaled = (f"--robot-size {robot_size}",
                            lambda f: f"--robot-size {length / f:g}x{width / f:g}")
    elif robot_radius is None and "length" in section:
        length = setting(f"{where} length", section["length"], Metres())
        width = setting(f"{where} width", section["width"], Metres())
        given_as, scaled = (f"{where} length {length:g}, width {width:g}",
                            lambda f: f"length = {length / f:g}, width = {width / f:g}")
    else:
        if offset is not None:
            raise InputError(f"{centre_name} needs a rectangular robot (--robot-size)")
        name, radius = (("--robot-radius", robot_radius) if robot_radius is not None
                        else (f"{where} radius", setting(f"{where} radius", section["radius"],
                                                         Metres())))
        robot = _plausible(Robot.disc(radius, margin=margin, **motion), f"{name} {radius:g}",
                           lambda f: f"{name} {radius / f:g}")
        if motion["kind"] == "car":
            _check_turn_radius(turn_radius, radius_name, half_width=radius)
        return robot
    if offset is not None:
        if motion["kind"] == "omni":
            raise InputError(f"{centre_name}: an omni robot turns about its centre; give no "
                             "offset")
        if not (abs(offset[0]) <= length / 2 and abs(offset[1]) <= width / 2):
            raise InputError(f"{centre_name} {offset[0]:g},{offset[1]:g} lies outside the "
                             f"{length:g} m x {width:g} m footprint (forward within "
                             f"+-{length / 2:g} m, left within +-{width / 2:g} m)")
    robot = _plausible(Robot.rectangle(length, width, margin=margin, **motion), given_as,
                       scaled)
    if motion["kind"] == "car":
        _check_turn_radius(turn_radius, radius_name,
                           half_width=width / 2 + abs(motion.get("centre", (0, 0))[1]))
    return robot
