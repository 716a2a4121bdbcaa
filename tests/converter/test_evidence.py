"""The unit evidence that walls give: the distance between a wall's two faces."""

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from clearway.converter.evidence import area_factors, text_area_m2, text_size_m, wall_thicknesses


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


@pytest.mark.parametrize("text, square_metres", [
    ("mq=28.51", 28.51),                       # Italian plans: metri quadri before the value
    ("Palier 2,09 m\u00b2", 2.09),             # decimal comma, superscript two
    ("A002 \nSalle TD\n71.25 m\u00b2", 71.25),  # a room tag's last line
    ("AREA :- 116.818 Sq.M.", 116.818),        # three decimals, not thousands
    ("855 SQ. FT.", 855 * 0.3048 ** 2),        # source: 1 ft = 0.3048 m exactly (1959 agreement)
    ("1,257 sf", 1257 * 0.3048 ** 2),          # thousands grouped in square feet
    ("1.257,5 m2", 1257.5),
])
def test_room_area_texts_state_square_metres(text, square_metres):
    assert text_area_m2(text) == pytest.approx(square_metres, rel=1e-12)


@pytest.mark.parametrize("text", ["H=2.60 cm", "3.60 m", "12 SFX", "ROOM 12", "m2"])
def test_texts_without_an_area_state_none(text):
    assert text_area_m2(text) is None


def test_an_area_text_implies_the_unit_of_its_smallest_outline():
    # analytic: a 5 m x 4 m room drawn in inches is 196.85 x 157.48 units; 20 m² inside it
    # implies 0.0254 m per unit; the building's outline round it is not the room's
    inch = 0.0254
    room = shapely.box(0, 0, 5 / inch, 4 / inch).exterior
    building = shapely.box(-10, -10, 20 / inch, 10 / inch).exterior
    factors = area_factors([(100, 80, "20.00 m\u00b2"), (700, 300, "9 m\u00b2")],
                           [building, room])
    assert factors[0] == pytest.approx(inch, rel=1e-12)
    assert len(factors) == 2 and abs(factors[1] / inch - 1) > 0.5


@pytest.mark.parametrize("text, sides", [
    ("14'2'' x 12'4''", (170 * 0.0254, 148 * 0.0254)),    # source: 1 in = 25.4 mm exactly
    ('12\'0" X 7\'11"', (144 * 0.0254, 95 * 0.0254)),
    ("Bedroom\n3.60 x 4.20 m", (3.6, 4.2)),              # the unit after the second side
    ("360 \u00d7 420 cm", (3.6, 4.2)),
])
def test_room_size_texts_state_two_sides_in_metres(text, sides):
    assert text_size_m(text) == pytest.approx(sides, rel=1e-12)


@pytest.mark.parametrize("text", ["3.60 x 4.20", "2 x 4", "Hallway", "1:50", "12 x 4'2''",
                                  "x 4.20 m", "3.60 m x"])
def test_texts_without_a_size_and_unit_state_none(text):
    assert text_size_m(text) is None


_PLAN_TEXT = st.text(alphabet=st.sampled_from(list("0123456789.,'\" xX\u00d7*=:-mqMQsSfFtT\u00b2\n")),
                     max_size=24)


@settings(max_examples=300, deadline=None)
@given(_PLAN_TEXT)
def test_any_text_states_an_area_and_a_size_or_none_and_never_fails(text):
    # drawings carry every kind of text: the readers answer a positive number or None
    area, size = text_area_m2(text), text_size_m(text)
    assert area is None or area > 0
    assert size is None or (len(size) == 2 and min(size) > 0)
