"""converter: read a DXF floor plan into obstacle and free-space polygons in metres."""

from clearway.lazy import lazy_exports

#: Public name -> the module defining it; imported on first use (see clearway/lazy.py).
__getattr__, __dir__, __all__ = lazy_exports(__name__, {
    "read_floorplan": "convert",
    "list_layers": "convert",
    "LayerTable": "convert",
    "LayerRow": "convert",
    "Roles": "roles",
    "DEFAULT_ROLE_PATTERNS": "roles",
    "ROLE_OPTION_NAMES": "roles",
    "UNITS_TO_M": "units",
    "check_units": "units",
    "FloorPlan": "floorplan",
    "Station": "floorplan",
    "Leak": "floorplan",
    "Opening": "floorplan",
    "PlanText": "floorplan",
    "ROLES": "floorplan",
    "OBSTACLE_ROLES": "floorplan",
    "OPENING_KINDS": "floorplan",
})
