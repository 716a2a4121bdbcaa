"""GeoJSON export checked with the geojson package, shapely and pyproj."""

from __future__ import annotations

import json

import geojson
import numpy as np
import pyproj
import pytest
import shapely
from shapely.geometry import shape

from clearway.exporters import render_geojson
from clearway.exporters.anchor import drawing_to_wgs84
from hall_fixture import HOSTILE


def _features(data: bytes) -> list[dict]:
    return json.loads(data.decode("utf-8"))["features"]


def _by(features, element, **properties):
    return [f for f in features if f["properties"]["element"] == element
            and all(f["properties"].get(k) == v for k, v in properties.items())]


@pytest.mark.parametrize("anchor", [None, (48.137, 11.575, 30.0)])
def test_geojson_package_validates_every_feature(plan, roadmap, anchor):
    data = render_geojson(plan, roadmap, anchor=anchor)
    collection = geojson.loads(data.decode("utf-8"))
    # source: RFC 7946 sec. 3.3 -- a FeatureCollection with a "features" array
    assert collection["type"] == "FeatureCollection"
    assert collection.is_valid, collection.errors()
    for feature in collection["features"]:
        assert geojson.Feature(**feature).is_valid, feature["properties"]
    kinds = {(f["properties"]["element"], f["geometry"]["type"]) for f in collection["features"]}
    assert kinds == {("area", "MultiPolygon"), ("edge", "LineString"), ("node", "Point"),
                     ("station", "Point")}


def test_polygon_rings_follow_the_right_hand_rule(plan, roadmap):
    for anchor in (None, (-33.9, 151.2, 200.0)):
        for feature in _by(_features(render_geojson(plan, roadmap, anchor=anchor)), "area"):
            for polygon in shape(feature["geometry"]).geoms:
                # source: RFC 7946 sec. 3.1.6 -- exterior counterclockwise, holes clockwise
                assert shapely.is_ccw(polygon.exterior)
                assert not any(shapely.is_ccw(ring) for ring in polygon.interiors)


def test_shapely_round_trips_areas_lanes_and_nodes(plan, roadmap):
    features = _features(render_geojson(plan, roadmap))
    roles = {f["properties"]["role"] for f in _by(features, "area")}
    # boundary is empty in this plan and so not written
    assert roles == {"wall", "racking", "keepout", "shared", "free", "drivable"}
    sources = {"free": plan.free_space, "drivable": roadmap.drivable, **plan.regions}
    for feature in _by(features, "area"):
        read = shape(feature["geometry"])
        expected = sources[feature["properties"]["role"]]
        assert read.is_valid
        # coordinates kept to 0.1 mm: the symmetric difference is a thin sliver at most
        assert read.symmetric_difference(expected).area < 1e-4 * max(expected.length, 1)
        assert feature["properties"]["area"] == pytest.approx(expected.area, rel=1e-12)
    for u, v, key, attrs in roadmap.graph.edges(keys=True, data=True):
        (feature,) = _by(features, "edge", id=key)
        line = shape(feature["geometry"])
        assert shapely.hausdorff_distance(line, attrs["geometry"]) < 1e-4
        start = roadmap.graph.nodes[feature["properties"]["source"]]
        assert line.coords[0] == pytest.approx((start["x"], start["y"]), abs=5e-5)
        assert feature["properties"]["length"] == attrs["length"]
    for node, attrs in roadmap.graph.nodes(data=True):
        (feature,) = _by(features, "node", id=node)
        assert shape(feature["geometry"]).distance(shapely.Point(attrs["x"], attrs["y"])) < 1e-4
        assert feature["properties"]["clearance"] == attrs["clearance"]
        assert feature["properties"]["x"] == attrs["x"]


def test_local_coordinates_are_declared_and_limited_to_a_tenth_of_a_millimetre(plan, roadmap):
    text = render_geojson(plan, roadmap).decode("utf-8")
    top = json.loads(text)
    # source: RFC 7946 sec. 4 -- another CRS only "by prior arrangement", so say which
    assert top["coordinate_system"]["type"] == "local"
    assert top["coordinate_system"]["units"] == "m"
    coordinates = np.concatenate([shapely.get_coordinates(shape(f["geometry"]))
                                  for f in top["features"]])
    # source: RFC 7946 sec. 11.2 -- no more precision than is meaningful
    assert np.allclose(coordinates, np.round(coordinates, 4), rtol=0, atol=1e-12)
    assert "ISO 3691-4" in top["caution"]


def test_hostile_label_survives_intact_in_json(plan, roadmap):
    data = render_geojson(plan, roadmap)
    data.decode("utf-8")                              # RFC 7946 sec. 1: UTF-8
    stations = _by(_features(data), "station")
    labels = {f["properties"]["label"] for f in stations}
    assert HOSTILE in labels                          # control char, RTL mark and all
    (hostile,) = [f for f in stations if f["properties"]["label"] == HOSTILE]
    assert hostile["properties"]["reachable"] is False
    assert hostile["properties"]["node"] is None
    assert "keep-out <KO>" in hostile["properties"]["reason"]


def test_identical_bytes_for_identical_input(plan, roadmap):
    assert render_geojson(plan, roadmap) == render_geojson(plan, roadmap)
    anchor = (52.52, 13.405, 12.5)
    assert render_geojson(plan, roadmap, anchor=anchor) == render_geojson(
        plan, roadmap, anchor=anchor)


def test_anchor_puts_a_point_100_m_up_about_0_000899_degrees_north():
    lonlat = drawing_to_wgs84(np.array([[0.0, 0.0], [0.0, 100.0]]), (45.0, 7.0, 0.0))
    # source: WGS84 meridian arc, about 111.13 km per degree of latitude at 45 deg
    # (meridian radius M = a(1-e2)/(1-e2 sin2 phi)^1.5 = 6 367 381.8 m)
    assert lonlat[1, 1] - lonlat[0, 1] == pytest.approx(0.000899, abs=0.000001)
    assert lonlat[1, 0] == pytest.approx(7.0, abs=1e-12)
    assert lonlat[0].tolist() == pytest.approx([7.0, 45.0], abs=1e-12)


def test_anchor_bearing_turns_the_y_axis_east():
    lonlat = drawing_to_wgs84(np.array([[0.0, 100.0], [100.0, 0.0]]), (0.0, 0.0, 90.0))
    # analytic: at the equator a degree of longitude is a * pi / 180 = 111 319.49 m
    assert lonlat[0, 0] == pytest.approx(100 / 111319.49, rel=1e-6)
    assert lonlat[0, 1] == pytest.approx(0.0, abs=1e-9)
    # analytic: +X is 90 degrees clockwise from +Y, so with +Y east it points south
    assert lonlat[1, 1] == pytest.approx(-100 / 110574.27, rel=1e-5)   # M at the equator


@pytest.mark.parametrize("latitude, longitude, bearing",
                         [(45.0, 7.0, 0.0), (48.137, 11.575, 30.0), (-33.9, 151.2, 200.0),
                          (64.1, -21.9, 315.0)])
def test_anchor_agrees_with_pyproj_to_a_few_millimetres(latitude, longitude, bearing):
    rng = np.random.default_rng(7)
    xy = rng.uniform(-600, 600, size=(50, 2))
    ours = drawing_to_wgs84(xy, (latitude, longitude, bearing))
    theta = np.radians(bearing)
    east = xy[:, 0] * np.cos(theta) + xy[:, 1] * np.sin(theta)
    north = -xy[:, 0] * np.sin(theta) + xy[:, 1] * np.cos(theta)
    # independent reference: pyproj's azimuthal equidistant projection on the WGS84 ellipsoid
    # centred on the anchor; within 600 m it differs from a tangent plane by d^3/(3 R^2) < 2 um
    aeqd = pyproj.Proj(proj="aeqd", lat_0=latitude, lon_0=longitude, ellps="WGS84")
    lon, lat = aeqd(east, north, inverse=True)
    _, _, distance = pyproj.Geod(ellps="WGS84").inv(ours[:, 0], ours[:, 1], lon, lat)
    assert np.max(distance) < 0.003


def test_anchored_geojson_coordinates_match_the_transform(plan, roadmap):
    anchor = (48.137, 11.575, 30.0)
    features = _features(render_geojson(plan, roadmap, anchor=anchor))
    top = json.loads(render_geojson(plan, roadmap, anchor=anchor))
    assert top["coordinate_system"]["type"] == "WGS84"
    assert top["coordinate_system"]["anchor"] == {"latitude": 48.137, "longitude": 11.575,
                                                  "bearing": 30.0}
    for node, attrs in roadmap.graph.nodes(data=True):
        (feature,) = _by(features, "node", id=node)
        expected = drawing_to_wgs84(np.array([[attrs["x"], attrs["y"]]]), anchor)[0]
        # 9 decimals of a degree: at most 5e-10 deg off (about 0.06 mm)
        assert feature["geometry"]["coordinates"] == pytest.approx(expected.tolist(), abs=6e-10)
        # source: RFC 7946 sec. 3.1.1 -- longitude first, then latitude
        assert feature["geometry"]["coordinates"][1] == pytest.approx(48.137, abs=0.001)


@pytest.mark.parametrize("anchor", [(95.0, 0.0, 0.0), (10.0, 200.0, 0.0),
                                    (float("nan"), 0.0, 0.0), ("north", 1, 2)])
def test_bad_anchor_is_refused(plan, roadmap, anchor):
    with pytest.raises(ValueError, match="anchor"):
        render_geojson(plan, roadmap, anchor=anchor)
