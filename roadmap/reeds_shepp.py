"""Shortest paths of bounded curvature that may back up: the Reeds-Shepp words.

Between two poses (x, y, heading) the shortest path of curvature <= 1/R for a car that
drives forwards and backwards is one of 48 words of at most five arcs (L, R) and straight
segments (S), with at most two cusps, in nine families [RS90]_:
C|C|C, CC|C, C|CC, CSC, CC|CC, C|CC|C, C|C[pi/2]SC, CSC[pi/2]|C, C|C[pi/2]SC[pi/2]|C.
Each family's segment lengths come in closed form for a goal pose (x, y, phi) seen from the
start (in units of R); the other words of a family follow by three symmetries [RS90]_
sec. 8: time flip (x, y, phi) -> (-x, y, -phi), every length negated; reflection
(x, y, phi) -> (x, -y, -phi), L and R exchanged; and backwards (the path read from its end),
the segments in reverse order. Lengths are signed: a negative length is driven backwards.
As in dubins.py every candidate is driven to its end and kept only if it lands on the goal,
so a formula that does not apply cannot give a wrong path.

References
----------
.. [RS90] J. A. Reeds and L. A. Shepp, "Optimal paths for a car that goes both forwards and
   backwards", Pacific Journal of Mathematics 145(2), 1990, sec. 8 (formulas 8.1-8.11).
"""

from __future__ import annotations

import math

from clearway.roadmap.dubins import DubinsPath, check_radius, lands

#: Rounding allowed in a formula's range checks (units of R or radians).
ZERO = 1e-10
HALF_PI = math.pi / 2


def _mod2pi(angle: float) -> float:
    """Angle wrapped to (-pi, pi]."""
    angle = math.fmod(angle, 2 * math.pi)
    if angle < -math.pi:
        angle += 2 * math.pi
    elif angle > math.pi:
        angle -= 2 * math.pi
    return angle


def _polar(x: float, y: float) -> tuple[float, float]:
    return math.hypot(x, y), math.atan2(y, x)


def _tau_omega(u, v, xi, eta, phi):
    delta = _mod2pi(u - v)
    a = math.sin(u) - math.sin(delta)
    b = math.cos(u) - math.cos(delta) - 1
    t1 = math.atan2(eta * a - xi * b, xi * a + eta * b)
    t2 = 2 * (math.cos(delta) - math.cos(v) - math.cos(u)) + 3
    tau = _mod2pi(t1 + math.pi) if t2 < 0 else _mod2pi(t1)
    return tau, _mod2pi(tau - u + v - phi)


# Each base formula returns the signed lengths of its word, or None (RS90 sec. 8).

def _lsl(x, y, phi):                                    # L+ S+ L+   (8.1)
    u, t = _polar(x - math.sin(phi), y - 1 + math.cos(phi))
    if t >= -ZERO:
        v = _mod2pi(phi - t)
        if v >= -ZERO:
            return t, u, v
    return None


def _lsr(x, y, phi):                                    # L+ S+ R+   (8.2)
    u1, t1 = _polar(x + math.sin(phi), y - 1 - math.cos(phi))
    u1 *= u1
    if u1 >= 4:
        u = math.sqrt(u1 - 4)
        theta = math.atan2(2, u)
        t = _mod2pi(t1 + theta)
        v = _mod2pi(t - phi)
        if t >= -ZERO and v >= -ZERO:
            return t, u, v
    return None


def _lrl(x, y, phi):                                    # L+ R- L+   (8.3)
    xi, eta = x - math.sin(phi), y - 1 + math.cos(phi)
    u1, theta = _polar(xi, eta)
    if u1 <= 4:
        u = -2 * math.asin(0.25 * u1)
        t = _mod2pi(theta + 0.5 * u + math.pi)
        v = _mod2pi(phi - t + u)
        if t >= -ZERO and u <= ZERO:
            return t, u, v
    return None


def _lrlr_a(x, y, phi):                                 # L+ R+ L- R-   (8.7)
    xi, eta = x + math.sin(phi), y - 1 - math.cos(phi)
    rho = 0.25 * (2 + math.hypot(xi, eta))
    if rho <= 1:
        u = math.acos(rho)
        t, v = _tau_omega(u, -u, xi, eta, phi)
        if t >= -ZERO and v <= ZERO:
            return t, u, -u, v
    return None


def _lrlr_b(x, y, phi):                                 # L+ R- L- R+   (8.8)
    xi, eta = x + math.sin(phi), y - 1 - math.cos(phi)
    rho = (20 - xi * xi - eta * eta) / 16
    if 0 <= rho <= 1:
        u = -math.acos(rho)
        if u >= -HALF_PI:
            t, v = _tau_omega(u, u, xi, eta, phi)
            if t >= -ZERO and v >= -ZERO:
                return t, u, u, v
    return None


def _lrsl(x, y, phi):                                   # L+ R-[pi/2] S- L-   (8.9)
    xi, eta = x - math.sin(phi), y - 1 + math.cos(phi)
    rho, theta = _polar(xi, eta)
    if rho >= 2:
        r = math.sqrt(rho * rho - 4)
        u = 2 - r
        t = _mod2pi(theta + math.atan2(r, -2))
        v = _mod2pi(phi - HALF_PI - t)
        if t >= -ZERO and u <= ZERO and v <= ZERO:
            return t, -HALF_PI, u, v
    return None


def _lrsr(x, y, phi):                                   # L+ R-[pi/2] S- R-   (8.10)
    xi, eta = x + math.sin(phi), y - 1 - math.cos(phi)
    rho, theta = _polar(-eta, xi)
    if rho >= 2:
        t = theta
        u = 2 - rho
        v = _mod2pi(t + HALF_PI - phi)
        if t >= -ZERO and u <= ZERO and v <= ZERO:
            return t, -HALF_PI, u, v
    return None


def _lrslr(x, y, phi):                                  # L+ R-[pi/2] S- L-[pi/2] R+   (8.11)
    xi, eta = x + math.sin(phi), y - 1 - math.cos(phi)
    rho, _ = _polar(xi, eta)
    if rho >= 2:
        u = 4 - math.sqrt(rho * rho - 4)
        if u <= ZERO:
            t = _mod2pi(math.atan2((4 - u) * xi - 2 * eta, -2 * xi + (u - 4) * eta))
            v = _mod2pi(t - phi)
            if t >= -ZERO and v >= -ZERO:
                return t, -HALF_PI, u, -HALF_PI, v
    return None


#: (formula, its word, whether the backwards reading applies too). The backwards reading
#: of a word is the word reversed, fed the goal seen from the end.
FAMILIES = ((_lsl, "LSL", False), (_lsr, "LSR", False), (_lrl, "LRL", True),
            (_lrlr_a, "LRLR", False), (_lrlr_b, "LRLR", False), (_lrsl, "LRSL", True),
            (_lrsr, "LRSR", True), (_lrslr, "LRSLR", False))

_SWAP = str.maketrans("LR", "RL")


def candidates(x: float, y: float, phi: float):
    """Every word that reaches goal (x, y, phi) from (0, 0, 0), lengths in units of R.

    Yields (word, signed lengths).
    """
    xb = x * math.cos(phi) + y * math.sin(phi)
    yb = x * math.sin(phi) - y * math.cos(phi)
    for formula, word, backwards in FAMILIES:
        readings = [(x, y, False)] + ([(xb, yb, True)] if backwards else [])
        for gx, gy, reverse in readings:
            for flip in (False, True):             # time flip
                for mirror in (False, True):       # reflection
                    found = formula(-gx if flip else gx, -gy if mirror else gy,
                                    -phi if flip != mirror else phi)
                    if found is None:
                        continue
                    lengths = tuple(-v for v in found) if flip else tuple(found)
                    letters = word.translate(_SWAP) if mirror else word
                    if reverse:
                        letters, lengths = letters[::-1], lengths[::-1]
                    yield letters, lengths


def shortest_path(start, goal, radius: float, *, known: dict | None = None) -> DubinsPath:
    """The shortest path of curvature <= 1/`radius` from `start` to `goal`, driving
    forwards and backwards (signed segment lengths; negative is backwards); the
    parameters are those of `dubins.shortest_path`. `known`, a dict the caller keeps,
    holds the candidate words of each goal seen from the start, by its exact value (a
    warehouse's turns round are mostly the same: its aisles run along the axes).

    Examples
    --------
    >>> path = shortest_path((0, 0, 0), (-2, 0, 0), 1.0)     # straight back 2 m
    >>> path.word, path.lengths
    ('LSL', (0.0, -2.0, 0.0))
    """
    return all_paths(start, goal, radius, first=True, known=known)[0]


def _sorted_candidates(x: float, y: float, phi: float):
    """Every candidate word for goal (x, y, phi), shortest first (ties in word order)."""
    return sorted(((word, tuple(float(v) + 0.0 for v in lengths))     # no -0.0
                   for word, lengths in candidates(x, y, phi)),
                  key=lambda item: sum(abs(v) for v in item[1]))        # stable: word order


def all_paths(start, goal, radius: float, *, first: bool = False,
              known: dict | None = None) -> list[DubinsPath]:
    """Every Reeds-Shepp word that lands on `goal`, shortest first (ties in word order);
    only the shortest with `first`; `known` as in `shortest_path`."""
    check_radius(radius)
    dx, dy = (goal[0] - start[0]) / radius, (goal[1] - start[1]) / radius
    c, s = math.cos(start[2]), math.sin(start[2])
    x, y = c * dx + s * dy, -s * dx + c * dy
    phi = goal[2] - start[2]
    if known is None:
        tried = _sorted_candidates(x, y, phi)
    else:
        key = ("reeds-shepp", *(float(v).hex() for v in (x, y, phi)))  # -0.0 is not 0.0
        if key not in known:
            known[key] = _sorted_candidates(x, y, phi)
        tried = known[key]
    found = {}
    for word, lengths in tried:
        if lands(start, goal, word, lengths, radius):
            found.setdefault((word, lengths), None)
            if first:
                break
    if not found:  # cannot happen for R > 0 (Reeds and Shepp 1990); kept as a guard
        raise ArithmeticError(f"no Reeds-Shepp path from {start} to {goal}")
    paths = [DubinsPath(tuple(float(v) for v in start), word, lengths, float(radius))
             for word, lengths in found]
    return sorted(paths, key=lambda path: path.length)
