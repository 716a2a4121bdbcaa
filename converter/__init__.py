"""converter: read a DXF floor plan into obstacle and free-space polygons in metres."""

from clearway.converter.convert import LayerRow, LayerTable, list_layers, read_floorplan
from clearway.converter.floorplan import (OBSTACLE_ROLES, OPENING_KINDS, ROLES, FloorPlan, Leak,
                                          Opening, PlanText, Station)
from clearway.converter.roles import DEFAULT_ROLE_PATTERNS, ROLE_OPTION_NAMES, Roles
from clearway.converter.units import UNITS_TO_M

__all__ = [
    "read_floorplan", "list_layers", "LayerTable", "LayerRow",
    "Roles", "DEFAULT_ROLE_PATTERNS", "ROLE_OPTION_NAMES", "UNITS_TO_M",
    "FloorPlan", "Station", "Leak", "Opening", "PlanText", "ROLES", "OBSTACLE_ROLES",
    "OPENING_KINDS",
]
