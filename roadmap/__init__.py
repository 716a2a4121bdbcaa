"""The roadmap stage: from a FloorPlan to the lane graph, routes and revision comparisons."""

from clearway.lazy import lazy_exports

#: Public name -> the module defining it; imported on first use (see clearway/lazy.py).
__getattr__, __dir__, __all__ = lazy_exports(__name__, {
    "BodyShortfall": "model",
    "ROBOT_KINDS": "choices",
    "Findings": "model",
    "MAX_ROBOT_SIZE": "fit",
    "MedialAxis": "gvd",
    "NODE_KINDS": "model",
    "NarrowPassage": "model",
    "Passage": "model",
    "PersonnelFlag": "model",
    "PinchPoint": "model",
    "Robot": "model",
    "Roadmap": "model",
    "Room": "model",
    "StationResult": "model",
    "build_roadmap": "build",
    "drivable_floor": "inflate",
    "generalized_voronoi": "gvd",
    "medial_axis": "gvd",
    "GraphChanges": "compare",
    "ROUTE_METHODS": "choices",
    "SAME_PLACE_TOLERANCE": "choices",
    "Route": "routing",
    "assign_stable_ids": "ids",
    "carry_ids_over": "ids",
    "compare_graphs": "compare",
    "display_name": "routing",
    "distance_matrix": "routing",
    "resolve_node": "routing",
    "room_nodes": "routing",
    "shortest_route": "routing",
    "site_warnings": "compare",
    "summarize_changes": "compare",
})
