"""The roadmap stage: from a FloorPlan to the lane graph, routes and revision comparisons."""

from roadmap.compare import GraphChanges, compare_graphs, summarize_changes
from roadmap.ids import assign_stable_ids, carry_ids_over
from roadmap.routing import (ROUTE_METHODS, Route, distance_matrix, resolve_node,
                             shortest_route)

__all__ = [
    "GraphChanges",
    "ROUTE_METHODS",
    "Route",
    "assign_stable_ids",
    "carry_ids_over",
    "compare_graphs",
    "distance_matrix",
    "resolve_node",
    "shortest_route",
    "summarize_changes",
]
