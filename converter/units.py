"""Drawing units: $INSUNITS codes, metres per unit, and the unit decision for a drawing."""

from __future__ import annotations

from clearway.errors import ConfigError

#: Metres per drawing unit, for every unit a user may name (``--units``).
#: Inch and foot are exact by definition (international yard and pound agreement, 1959).
UNITS_TO_M: dict[str, float] = {
    "mm": 0.001,
    "cm": 0.01,
    "m": 1.0,
    "in": 0.0254,
    "ft": 0.3048,
    "yd": 0.9144,
}

#: DXF $INSUNITS codes clearway understands, to unit names of UNITS_TO_M.
INSUNITS_CODES: dict[int, str] = {1: "in", 2: "ft", 4: "mm", 5: "cm", 6: "m", 10: "yd"}

#: Largest side, metres, of a plausible single floor plan; smallest likewise.
PLAUSIBLE_SPAN_M = (2.0, 3000.0)


def check_units(units: str | None) -> str | None:
    """Return `units` when it is None or a key of UNITS_TO_M; raise ConfigError otherwise.

    Examples
    --------
    >>> check_units("ft")
    'ft'
    """
    if units is not None and units not in UNITS_TO_M:
        raise ConfigError(f"units must be one of {', '.join(UNITS_TO_M)}, got {units!r}")
    return units


def decide_units(insunits, override, span_drawing, *, source):
    """Decide the drawing's unit.

    Parameters
    ----------
    insunits : int or None
        The header's $INSUNITS value (None when absent).
    override : str or None
        A unit name from UNITS_TO_M given by the user; it wins over the header.
    span_drawing : float
        The larger side of the drawing's extents, in drawing units (0 when unknown).
    source : str
        File name used in messages.

    Returns
    -------
    (units, m_per_unit, unit_note, warnings) : (str, float, str, tuple of str)

    Raises
    ------
    ConfigError
        `override` is not a key of UNITS_TO_M (a ValueError).

    Examples
    --------
    >>> decide_units(4, None, 60000.0, source="a.dxf")[:2]
    ('mm', 0.001)
    >>> decide_units(0, None, 60000.0, source="a.dxf")[:2]
    ('mm', 0.001)
    """
    if check_units(override) is not None:
        header = f"$INSUNITS = {insunits}" if insunits is not None else "no $INSUNITS"
        note = f"Read in {override} as requested (--units {override}; the header says {header})."
        return override, UNITS_TO_M[override], note, ()
    if insunits in INSUNITS_CODES:
        units = INSUNITS_CODES[insunits]
        return units, UNITS_TO_M[units], f"Read in {units} from the header ($INSUNITS = {insunits}).", ()
    note = (f"Assumed metres: the header gives no unit clearway knows ($INSUNITS = {insunits}); "
            f"pass --units to say otherwise.")
    low, high = PLAUSIBLE_SPAN_M
    if span_drawing and not low <= span_drawing <= high:
        likely = likely_unit(span_drawing)
        if likely is None:
            warning = (f"{source}: drawing has no units ($INSUNITS = {insunits}) and spans "
                       f"{span_drawing:.0f} units, implausible in metres; pass --units")
            return "m", 1.0, note, (warning,)
        # a building tens of kilometres wide is a drawing in another unit: read it in the
        # unit that makes it a building, and say so loudly
        span_m = span_drawing * UNITS_TO_M[likely]
        note = (f"Assumed {likely}: the header gives no unit clearway knows ($INSUNITS = "
                f"{insunits}) and the drawing spans {span_drawing:.0f} units, implausible in "
                f"metres, {span_m:.1f} m in {likely}; pass --units to say otherwise.")
        warning = (f"{source}: drawing has no units ($INSUNITS = {insunits}) and spans "
                   f"{span_drawing:.0f} units, implausible in metres; read it as {likely}, "
                   f"its likely unit; pass --units if that is wrong")
        return likely, UNITS_TO_M[likely], note, (warning,)
    return "m", 1.0, note, ()


def likely_unit(span_drawing):
    """Return the unit that makes a span of `span_drawing` units a plausible building, or None.

    Examples
    --------
    >>> likely_unit(40000.0), likely_unit(1500.0), likely_unit(1e9)
    ('mm', 'in', None)
    """
    low, high = PLAUSIBLE_SPAN_M
    for units in ("mm", "in", "cm", "ft"):
        if low <= span_drawing * UNITS_TO_M[units] <= high / 10:
            return units
    return None
