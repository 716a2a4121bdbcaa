"""roadmap/checks.py: narrow passages, bottlenecks and edge weights, on their own."""

from __future__ import annotations

import networkx as nx
import pytest
import shapely

from clearway.roadmap.checks import _bottleneck, narrow_passages, weigh_edges
from clearway.roadmap.gvd import medial_axis
from clearway.roadmap.inflate import drivable_region
from clearway.roadmap.model import NarrowPassage

C = 0.45                                    # robot radius 0.35 m + margin 0.1 m


def _two_rooms(door):
    """Two 4 m x 4 m rooms 0.2 m apart, joined by a doorway `door` m wide centred on y = 2."""
    rooms = shapely.box(0, 0, 4, 4) | shapely.box(4.2, 0, 8.2, 4)
    return rooms | shapely.box(3.9, 2 - door / 2, 4.3, 2 + door / 2)


def test_a_doorway_narrower_than_2c_is_one_narrow_passage_its_width_wide():
    free = _two_rooms(0.8)
    regions = drivable_region(free, C)
    assert len(regions) == 2
    (passage,) = narrow_passages(medial_axis(free, step=0.05), C, regions, (100.0, 200.0))
    # analytic: on the axis through the doorway the clearance bottoms out at half its width,
    # and the passage is reported twice that, in the drawing frame (offset added)
    assert passage.width == pytest.approx(0.8, abs=0.01)
    assert 103.9 <= passage.x <= 104.3 and passage.y == pytest.approx(202.0, abs=0.05)
    assert sorted(passage.regions) == [0, 1] and passage.blocks == ()


def test_no_passage_where_the_doorway_is_wide_enough():
    free = _two_rooms(1.0)
    assert narrow_passages(medial_axis(free, step=0.05), C, drivable_region(free, C)) == []


def test_the_bottleneck_is_the_narrowest_passage_of_the_widest_route():
    # regions 0 - 1 - 2 in a chain and a direct 0 - 2 passage: from region 2 to region 0
    # the widest route is the direct 0.7 m passage (the chain's narrowest is 0.5 m): the
    # maximin path, Hu 1961 ("The maximum capacity route problem")
    passages = [NarrowPassage(0, 0, 0.8, regions=(0, 1)), NarrowPassage(0, 0, 0.5, regions=(1, 2)),
                NarrowPassage(0, 0, 0.7, regions=(0, 2))]
    assert _bottleneck(passages, 2, {0}) == 2
    # without the direct passage, the chain's 0.5 m passage limits it
    assert _bottleneck(passages[:2], 2, {0}) == 1
    # region 1 reaches 0 through 0.8 m directly
    assert _bottleneck(passages, 1, {0}) == 0
    assert _bottleneck(passages, -1, {0}) is None and _bottleneck(passages, 2, set()) is None
    assert _bottleneck(passages[:1], 2, {0}) is None          # no route at all


def test_weigh_edges_penalises_only_lanes_below_comfort():
    graph = nx.MultiGraph()
    graph.add_edge("n0", "n1", "e0", length=10.0, clearance_min=0.5)
    graph.add_edge("n1", "n2", "e1", length=4.0, clearance_min=0.7)
    weigh_edges(graph, 0.65, 0.5)
    # by definition: weight = length * (1 + penalty) below comfort, else length
    assert graph.edges["n0", "n1", "e0"]["weight"] == 15.0
    assert graph.edges["n1", "n2", "e1"]["weight"] == 4.0
