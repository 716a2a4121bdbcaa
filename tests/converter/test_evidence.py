"""The unit evidence that walls give: the distance between a wall's two faces."""

import numpy as np
import pytest
import shapely

from clearway.converter.evidence import wall_thicknesses


def test_wall_thickness_is_the_distance_between_overlapping_parallel_faces():
    angle = np.radians(30.0)
    along, across = np.array([np.cos(angle), np.sin(angle)]), np.array([-np.sin(angle), np.cos(angle)])
    start = np.array([5.0, 2.0])

    def line(offset, begin, end):
        return shapely.LineString([start + across * offset + along * begin,
                                   start + across * offset + along * end])

    lines = [line(0.0, 0.0, 10.0), line(0.24, 0.0, 10.0),       # a 0.24 m wall, 10 m long
             line(20.0, 0.0, 4.0), line(20.5, 6.0, 10.0),       # parallel but side by side
             shapely.LineString([start, start + across * 0.24])]  # the wall's end cap
    found = wall_thicknesses(lines)
    # analytic: each face's nearest overlapping parallel partner is the other face, 0.24 m
    # away; the two side-by-side lines do not overlap along their length, and the cap has
    # no parallel partner
    assert len(found) == 2 and found == pytest.approx([0.24, 0.24], abs=1e-9)


def test_wall_thickness_takes_the_nearest_of_several_partners():
    faces = [shapely.LineString([(0, y), (8, y)]) for y in (0.0, 0.2, 3.2)]
    # analytic: the middle face is 0.2 m from one neighbour and 3.0 m from the other
    assert sorted(wall_thicknesses(faces)) == pytest.approx([0.2, 0.2, 3.0])
