"""The roadmap stage: from a FloorPlan to the lane graph, routes and revision comparisons."""

from clearway.roadmap.build import build_roadmap
from clearway.roadmap.compare import (GraphChanges, compare_graphs, site_warnings,
                                      summarize_changes)
from clearway.roadmap.ids import SAME_PLACE_TOLERANCE, assign_stable_ids, carry_ids_over
from clearway.roadmap.gvd import MedialAxis, generalized_voronoi, medial_axis
from clearway.roadmap.model import (NODE_KINDS, ROBOT_KINDS, BodyShortfall, Findings, NarrowPassage, PersonnelFlag, PinchPoint,
                           Robot, Roadmap, StationResult)
from clearway.roadmap.routing import (ROUTE_METHODS, Route, distance_matrix, resolve_node,
                             shortest_route)

__all__ = [
    "BodyShortfall",
    "ROBOT_KINDS",
    "Findings",
    "MedialAxis",
    "NODE_KINDS",
    "NarrowPassage",
    "PersonnelFlag",
    "PinchPoint",
    "Robot",
    "Roadmap",
    "StationResult",
    "build_roadmap",
    "generalized_voronoi",
    "medial_axis",
    "GraphChanges",
    "ROUTE_METHODS",
    "SAME_PLACE_TOLERANCE",
    "Route",
    "assign_stable_ids",
    "carry_ids_over",
    "compare_graphs",
    "distance_matrix",
    "resolve_node",
    "shortest_route",
    "site_warnings",
    "summarize_changes",
]
