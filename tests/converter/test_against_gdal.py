"""Obstacle polygons against GDAL/OGR's independent reading of the same sample drawings."""

import os

import numpy as np
import pyogrio.raw
import pytest
import shapely

from clearway.converter import Roles, UNITS_TO_M, read_floorplan

# the 1959 yard and pound agreement and SI: drawing unit -> metres, by $INSUNITS
FACTORS = {"distribution_centre.dxf": 0.001, "distribution_centre_rev_b.dxf": 0.001,
           "clinic.dxf": 0.0254}


def ogr_geometries(path):
    """Read model space through GDAL's DXF driver with blocks inlined; (layer, geometry) pairs."""
    previous = os.environ.get("DXF_INLINE_BLOCKS")
    os.environ["DXF_INLINE_BLOCKS"] = "TRUE"  # GDAL DXF driver config option (default TRUE)
    try:
        _, _, wkb, fields = pyogrio.raw.read(path)
    finally:
        if previous is None:
            os.environ.pop("DXF_INLINE_BLOCKS")
        else:
            os.environ["DXF_INLINE_BLOCKS"] = previous
    geometries = shapely.from_wkb(wkb)
    layers = np.asarray(fields[0], dtype=object)
    pairs = []
    for layer, geometry in zip(layers, geometries):
        parts = [geometry]
        while any(part.geom_type.startswith(("Multi", "Geometry")) for part in parts):
            parts = [piece for part in parts for piece in shapely.get_parts(part)]
        pairs.extend((layer, part) for part in parts)
    return pairs


def ogr_obstacles(path, factor):
    """Obstacles from OGR's geometry: wall faces no wider than 0.6 m, closed racking/keep-out."""
    roles = Roles()
    lines, filled = [], []
    for layer, geometry in ogr_geometries(path):
        role = roles.role_of(layer)
        geometry = shapely.affinity.scale(geometry, factor, factor, origin=(0, 0))
        if role == "wall" and geometry.geom_type == "LineString":
            lines.append(geometry)
        elif role in ("wall", "racking", "keepout") and geometry.geom_type == "Polygon":
            filled.append(geometry)
        elif role in ("racking", "keepout") and geometry.geom_type == "LineString" \
                and geometry.is_closed:
            filled.append(shapely.Polygon(geometry.coords))
    faces = shapely.get_parts(shapely.polygonize(shapely.get_parts(shapely.union_all(lines))))
    radius = shapely.length(shapely.maximum_inscribed_circle(faces, 0.001))
    return shapely.union_all(np.concatenate([faces[2 * radius <= 0.6], filled]))


@pytest.mark.parametrize("name", sorted(FACTORS))
def test_obstacles_agree_with_gdal(samples, name):
    plan = read_floorplan(samples / name)
    assert plan.m_per_unit == FACTORS[name]
    ours = shapely.union_all([plan.regions[role] for role in ("wall", "racking", "keepout")])
    theirs = ogr_obstacles(str(samples / name), FACTORS[name])
    # the acceptance bound: union area and extents within 0.5 %
    assert ours.area == pytest.approx(theirs.area, rel=0.005)
    span = max(theirs.bounds[2] - theirs.bounds[0], theirs.bounds[3] - theirs.bounds[1])
    assert np.allclose(ours.bounds, theirs.bounds, atol=0.005 * span)
    # and the two readings overlap almost everywhere
    assert ours.symmetric_difference(theirs).area <= 0.005 * theirs.area


def test_units_table_feeds_the_factors():
    # exact by definition: 1 in = 25.4 mm (international yard and pound agreement, 1959)
    assert UNITS_TO_M["in"] == FACTORS["clinic.dxf"] == 25.4 * UNITS_TO_M["mm"]
