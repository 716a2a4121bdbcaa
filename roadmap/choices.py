"""Choices and defaults the command line offers, in a module that imports nothing, so that
`clearway --help` can show them without loading networkx, numpy or scipy."""

#: How a robot changes heading: turns in place, steers like a car, or moves in any direction.
ROBOT_KINDS = ("differential", "car", "omni")

#: Route search methods of `shortest_route`; both find a route of the same cost.
ROUTE_METHODS = ("astar", "dijkstra")

#: A node within this distance of a node of the other revision (same kind, same label for
#: stations) stands for the same place, metres: `build --previous` gives it the old id and
#: `compare` counts it as moved, not as removed and added. One tolerance, one meaning; half
#: a metre is less than a common robot's width, so a node that moved that far is still on
#: the same aisle.
SAME_PLACE_TOLERANCE = 0.5
