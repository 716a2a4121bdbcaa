"""Place drawing coordinates on the WGS84 ellipsoid through a local tangent plane.

The drawing origin is pinned to a WGS84 latitude/longitude and the drawing's +Y axis to a
bearing (degrees clockwise from true north). A drawing point (x, y) in metres becomes east /
north offsets in the tangent plane at the origin, then an Earth-centred (ECEF) position on that
plane, then the geodetic latitude / longitude of the ellipsoid normal through it.

References
----------
.. [NIMA00] NIMA TR8350.2, *Department of Defense World Geodetic System 1984*, 3rd ed., 2000:
   a = 6378137 m, 1/f = 298.257223563.
.. [Bow76] B. R. Bowring, "Transformation from spatial to geographical coordinates",
   Survey Review 23(181), 1976 (the latitude iteration used below).
"""

from __future__ import annotations

import math

import numpy as np

#: WGS84 semi-major axis, metres, and flattening [NIMA00].
WGS84_A = 6378137.0
WGS84_F = 1 / 298.257223563
_E2 = WGS84_F * (2 - WGS84_F)            # first eccentricity squared


def check_anchor(anchor: tuple[float, float, float]) -> tuple[float, float, float]:
    """Validate (latitude, longitude, bearing) in degrees; return them as floats.

    Raises
    ------
    ValueError
        Latitude outside (-89, 89) (the tangent plane is not useful at the poles),
        longitude outside [-180, 180], or a value that is not finite.
    """
    try:
        latitude, longitude, bearing = (float(value) for value in anchor)
    except (TypeError, ValueError):
        raise ValueError(f"anchor must be LAT,LON,BEARING in degrees, got {anchor!r}") from None
    if not all(math.isfinite(v) for v in (latitude, longitude, bearing)):
        raise ValueError(f"anchor values must be finite, got {anchor!r}")
    if not -89.0 < latitude < 89.0:
        raise ValueError(f"anchor latitude must be within -89..89 degrees, got {latitude}")
    if not -180.0 <= longitude <= 180.0:
        raise ValueError(f"anchor longitude must be within -180..180 degrees, got {longitude}")
    return latitude, longitude, bearing


def prime_vertical_radius(latitude_rad):
    """Radius of curvature in the prime vertical N(phi), metres (WGS84)."""
    return WGS84_A / np.sqrt(1.0 - _E2 * np.sin(latitude_rad) ** 2)


def drawing_to_wgs84(xy: np.ndarray, anchor: tuple[float, float, float]) -> np.ndarray:
    """Convert drawing coordinates to WGS84 longitude / latitude.

    Parameters
    ----------
    xy : (N, 2) ndarray
        Drawing coordinates, metres.
    anchor : (latitude, longitude, bearing)
        WGS84 position of the drawing origin (degrees) and the bearing of the drawing's
        +Y axis (degrees clockwise from true north).

    Returns
    -------
    (N, 2) ndarray
        Longitude, latitude in degrees (RFC 7946 sec. 3.1.1 order).

    Examples
    --------
    >>> lonlat = drawing_to_wgs84(np.array([[0.0, 100.0]]), (45.0, 7.0, 0.0))
    >>> round(float(lonlat[0, 1] - 45.0), 6)      # about 111.1 km per degree at 45 N
    0.0009
    """
    latitude, longitude, bearing = check_anchor(anchor)
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    phi0, lam0, theta = np.radians([latitude, longitude, bearing])
    # +Y points at `bearing`, +X 90 degrees clockwise from it.
    east = xy[:, 0] * np.cos(theta) + xy[:, 1] * np.sin(theta)
    north = -xy[:, 0] * np.sin(theta) + xy[:, 1] * np.cos(theta)

    n0 = prime_vertical_radius(phi0)
    origin = np.array([n0 * np.cos(phi0) * np.cos(lam0), n0 * np.cos(phi0) * np.sin(lam0),
                       n0 * (1 - _E2) * np.sin(phi0)])
    sin_phi, cos_phi, sin_lam, cos_lam = np.sin(phi0), np.cos(phi0), np.sin(lam0), np.cos(lam0)
    x = origin[0] - sin_lam * east - sin_phi * cos_lam * north
    y = origin[1] + cos_lam * east - sin_phi * sin_lam * north
    z = origin[2] + cos_phi * north

    lam = np.arctan2(y, x)
    p = np.hypot(x, y)
    phi = np.arctan2(z, p * (1 - _E2))
    for _ in range(6):      # converges to far below a micrometre within 3 steps near the surface
        phi = np.arctan2(z + _E2 * prime_vertical_radius(phi) * np.sin(phi), p)
    return np.column_stack([np.degrees(lam), np.degrees(phi)])
