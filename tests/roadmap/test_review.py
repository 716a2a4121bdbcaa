"""Edge cases found in review: square rooms, stations on lane ends, pinch points at stations."""

from __future__ import annotations

import networkx as nx
import pytest

from clearway.roadmap import Robot, build_roadmap
from roadmap_builders import corridor, plan

ROBOT = Robot.disc(0.3, margin=0.1)  # c = 0.4 m


def test_square_hall_stations_join():
    # analytic: a 5 m square hall's medial axis is its two diagonals, every arm falling
    # towards a corner at sin 45 deg (a spur), but the drivable 4.2 m square is one region
    # and both stations stand in it with clearance 2.5 m and 1 m > c: both must join.
    obstacles, free = plan((0.0, 0.0, 5.0, 5.0))
    roadmap = build_roadmap(obstacles, free, [("A", 2.5, 2.5), ("B", 1.0, 1.0)], robot=ROBOT)
    assert [s.reachable for s in roadmap.findings.stations] == [True, True]
    nodes = [s.node for s in roadmap.findings.stations]
    assert nx.has_path(roadmap.graph, *nodes)


@pytest.mark.parametrize("stations", [
    [("A", 5.0, 1.0), ("B", 5.0, 1.0)],   # two stations on one spot of the lane
    [("A", 1.0, 1.0)],                    # a station on the lane's end node
])
def test_coincident_station_does_not_crash(stations):
    # analytic: in a 10 x 2 m corridor the medial axis is y = 1 from x = 1 to 9 (the arms
    # into the corners are spurs); a station on it has clearance 1 m > c = 0.4 m, so each
    # joins, even on the end node (1, 1) or on top of another station, in one component.
    obstacles, free = corridor(2.0)
    roadmap = build_roadmap(obstacles, free, stations, robot=ROBOT)
    assert all(s.reachable for s in roadmap.findings.stations)
    assert nx.is_connected(roadmap.graph)


def test_duplicate_stations_rectangular_robot():
    # analytic: a 1.0 x 0.6 m robot is inflated by hypot(1.0, 0.6) / 2 = 0.583 m, c = 0.683 m;
    # the 2 m corridor's lane y = 1 reaches x = 1, so stations at (1, 1) sit on its end,
    # two of them on the same spot
    obstacles, free = corridor(2.0)
    robot = Robot.rectangle(1.0, 0.6, margin=0.1)
    roadmap = build_roadmap(obstacles, free, [("A", 1.0, 1.0), ("B", 1.0, 1.0)], robot=robot)
    assert [s.reachable for s in roadmap.findings.stations] == [True, True]
    assert nx.is_connected(roadmap.graph)


def test_pinch_point_kept_where_station_splits_lane():
    # analytic: a 1.0 m corridor has clearance 0.5 m on its centre line, below the comfort
    # clearance c + 0.2 = 0.6 m, so the lane is a pinch run with or without a station on it.
    obstacles, free = corridor(1.0)
    roadmap = build_roadmap(obstacles, free, [("A", 5.0, 0.5)], robot=ROBOT)
    assert roadmap.findings.stations[0].reachable
    assert roadmap.findings.pinch_points
    assert all(p.clearance == pytest.approx(0.5, abs=0.005)
               for p in roadmap.findings.pinch_points)
