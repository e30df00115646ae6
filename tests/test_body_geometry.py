"""Geometry of embedded bodies: cut-cell volumes, path intersections, containment, shape checks.

Outside references:

* the area of a disc, pi R^2, and of a circular segment cut off at distance d from the centre,
  R^2 acos(d/R) - d sqrt(R^2 - d^2) (standard geometry);
* the shoelace (Gauss) area of a simple polygon;
* scipy.integrate.quad of the chord length for the area of a disc inside a rectangle;
* matplotlib.path.Path.contains_points (a general-purpose library) for point-in-polygon;
* the straight-line time to a plane or a circle (elementary kinematics).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from matplotlib.path import Path as MplPath
from scipy import integrate

from dsmc import geometry as geo
from dsmc.kernels import bodies as kb


def _grid(lx, ly, nx, ny):
    return np.linspace(0.0, lx, nx + 1), np.linspace(0.0, ly, ny + 1)


CASES = [
    ("circle on grid lines", [geo.Circle((0.5, 0.5), 0.25)], (1.0, 1.0, 20, 20)),
    ("circle off the grid", [geo.Circle((0.4137, 0.2911), 0.1713)], (1.0, 0.6, 37, 23)),
    ("circle inside one cell", [geo.Circle((0.512, 0.533), 0.01)], (1.0, 1.0, 10, 10)),
    ("circle touching a side", [geo.Circle((0.3, 0.2), 0.2)], (1.0, 1.0, 13, 17)),
    ("thin plate at 10 degrees", [geo.Polygon.from_points(
        [[0.3, 0.5], [0.7, 0.5 + 0.4 * math.tan(0.17)], [0.7, 0.51 + 0.4 * math.tan(0.17)],
         [0.3, 0.51]])], (1.0, 1.0, 40, 40)),
    ("concave L and a star", [
        geo.Polygon.from_points([[0.1, 0.1], [0.4, 0.1], [0.4, 0.2], [0.2, 0.2], [0.2, 0.45],
                                 [0.1, 0.45]]),
        geo.Polygon.from_points([[0.7 + (0.2 if k % 2 == 0 else 0.08) * math.cos(k * math.pi / 5),
                                  0.6 + (0.2 if k % 2 == 0 else 0.08) * math.sin(k * math.pi / 5)]
                                 for k in range(10)])], (1.0, 0.9, 31, 29)),
    ("clockwise square on cell edges", [geo.Polygon.from_points(
        [[0.2, 0.2], [0.2, 0.6], [0.6, 0.6], [0.6, 0.2]])], (1.0, 1.0, 10, 10)),
]


@pytest.mark.parametrize("name,shapes,grid", CASES, ids=[c[0] for c in CASES])
def test_cut_volumes_sum_to_domain_minus_bodies(name, shapes, grid):
    """Sum of cut-cell volumes = domain area - body areas (pi R^2, shoelace) to 1e-10."""
    lx, ly, nx, ny = grid
    xe, ye = _grid(lx, ly, nx, ny)
    vol = geo.cut_volumes(shapes, xe, ye)
    exact = lx * ly - sum(s.area for s in shapes)
    assert abs(vol.sum() - exact) <= 1e-10 * exact
    assert np.all(vol >= 0.0) and np.all(vol <= (lx / nx) * (ly / ny) * (1 + 1e-12))


def test_square_on_cell_edges_covers_whole_cells():
    """A square whose sides lie on grid lines removes exactly its 16 cells."""
    xe, ye = _grid(1.0, 1.0, 10, 10)
    sq = geo.Polygon.from_points([[0.2, 0.2], [0.6, 0.2], [0.6, 0.6], [0.2, 0.6]])
    vol = geo.cut_volumes([sq], xe, ye).reshape(10, 10)
    assert np.count_nonzero(vol == 0.0) == 16
    assert np.allclose(vol[2:6, 2:6], 0.0) and np.allclose(vol[vol > 0], 0.01, rtol=1e-12)


def test_circle_rectangle_area_against_quadrature_and_segments():
    rng = np.random.default_rng(5)
    R = 0.7
    assert kb.circle_rect_area(0.0, 0.0, R, -1, -1, 1, 1) == pytest.approx(math.pi * R * R, rel=1e-14)
    # circular segment beyond the chord at distance d (standard geometry)
    for d in (0.0, 0.1, 0.35, 0.69):
        seg = R * R * math.acos(d / R) - d * math.sqrt(R * R - d * d)
        assert kb.circle_rect_area(0.0, 0.0, R, d, -1, 1, 1) == pytest.approx(seg, rel=1e-12)
        assert kb.circle_rect_area(0.0, 0.0, R, -1, -1, 1, -d) == pytest.approx(seg, rel=1e-12)
    for _ in range(40):
        x0, x1 = np.sort(rng.uniform(-1.0, 1.0, 2))
        y0, y1 = np.sort(rng.uniform(-1.0, 1.0, 2))

        def chord(x):
            h = math.sqrt(max(R * R - x * x, 0.0))
            return max(0.0, min(y1, h) - max(y0, -h))

        a, b = max(x0, -R), min(x1, R)
        # the chord has kinks where the circle crosses y = y0 or y = y1
        kinks = [s * math.sqrt(R * R - y * y) for y in (y0, y1) if abs(y) < R for s in (-1, 1)]
        ref = integrate.quad(chord, a, b, limit=200, epsabs=1e-15, epsrel=1e-12,
                             points=[k for k in kinks if a < k < b] or None)[0] if b > a else 0.0
        got = kb.circle_rect_area(0.0, 0.0, R, x0, y0, x1, y1)
        assert got == pytest.approx(ref, rel=1e-9, abs=1e-13)


def test_polygon_rectangle_area_concave():
    """A U-shaped polygon clipped by a rectangle crossing both arms (a concave subject whose
    clip falls apart in two pieces) gives the two pieces' area."""
    u = np.array([[0, 0], [3, 0], [3, 3], [2, 3], [2, 1], [1, 1], [1, 3], [0, 3]], dtype=float)
    area = kb.polygon_rect_area(u[:, 0].copy(), u[:, 1].copy(), -1.0, 2.0, 4.0, 2.5)
    assert area == pytest.approx(2 * 1.0 * 0.5, rel=1e-14)


def test_containment_against_matplotlib():
    star = CASES[5][1][1]
    circle = geo.Circle((0.2, 0.3), 0.1)
    t = geo.body_tables([star, circle], [10, 8])
    rng = np.random.default_rng(2)
    pts = rng.uniform(0.0, 1.0, (4000, 2))
    got = geo.contains(t, pts)
    in_star = MplPath(star.points).contains_points(pts)
    in_circle = np.hypot(pts[:, 0] - 0.2, pts[:, 1] - 0.3) < 0.1
    assert np.array_equal(got == 0, in_star)
    assert np.array_equal(got == 1, in_circle)


def _hit(shapes, x, y, vx, vy, t, panels=None):
    tb = geo.body_tables(shapes, panels or [4] * len(shapes))
    return tb, kb.first_body_hit(x, y, vx, vy, t, tb.elem, tb.box, tb.first, -1)


def test_path_meets_circle_at_the_kinematic_time():
    c = geo.Circle((0.5, 0.5), 0.1)
    tb, (th, k) = _hit([c], 0.2, 0.53, 2.0, 0.0, 1.0)
    # |(0.2 + 2 t - 0.5, 0.03)| = 0.1  ->  2 t = 0.3 - sqrt(0.01 - 0.0009)
    assert k == 0 and th == pytest.approx((0.3 - math.sqrt(0.0091)) / 2.0, rel=1e-14)
    xs, ys, nx, ny, panel = kb.surface_point(0.2 + 2 * th, 0.53, tb.elem[k], 1e-12)
    assert math.hypot(xs - 0.5, ys - 0.5) == pytest.approx(0.1 + 1e-12, rel=1e-13)
    assert panel == 1  # angle in (pi/2, pi) of 4 arcs counted from +x
    # a path that passes by, one that is too short, one moving away
    assert _hit([c], 0.2, 0.65, 2.0, 0.0, 1.0)[1][1] == -1
    assert _hit([c], 0.2, 0.53, 2.0, 0.0, 0.05)[1][1] == -1
    assert _hit([c], 0.2, 0.53, -2.0, 0.0, 1.0)[1][1] == -1


def test_path_meets_segments_from_the_gas_side_only():
    plate = geo.Polygon.from_points([[0.4, 0.5], [0.6, 0.5], [0.6, 0.52], [0.4, 0.52]])
    tb, (th, k) = _hit([plate], 0.45, 0.9, 0.0, -1.0, 1.0)
    assert th == pytest.approx(0.38, rel=1e-13) and tb.elem[k, kb.E_NY] == 1.0  # top face
    tb, (th, k) = _hit([plate], 0.45, 0.1, 0.0, 1.0, 1.0)
    assert th == pytest.approx(0.4, rel=1e-13) and tb.elem[k, kb.E_NY] == -1.0  # bottom face
    # through the exact corner (0.4, 0.52): caught by one of the two edges that meet there
    tb, (th, k) = _hit([plate], 0.3, 0.62, 1.0, -1.0, 1.0)
    assert k >= 0 and th == pytest.approx(0.1, rel=1e-12)
    # a path parallel to the top face, above it, passes
    assert _hit([plate], 0.3, 0.53, 1.0, 0.0, 1.0)[1][1] == -1


def test_panel_layout():
    plate = geo.Polygon.from_points([[0.0, 0.0], [1.0, 0.0], [1.0, 0.02], [0.0, 0.02]])
    counts = geo.edge_panels(plate, 40)
    assert list(counts) == [20, 1, 20, 1]
    t = geo.body_tables([plate, geo.Circle((2.0, 0.0), 0.5)], [40, 36])
    p = t.panels
    assert t.n_panels == 42 + 36
    assert p.length[:42].sum() == pytest.approx(plate.perimeter, rel=1e-14)
    assert p.length[42:].sum() == pytest.approx(math.pi, rel=1e-14)
    assert np.allclose(np.hypot(*p.normal.T), 1.0)
    # outward normals: from the body centroid toward the panel
    rel = p.center[:42] - np.array([0.5, 0.01])
    assert np.all(np.sum(rel * p.normal[:42], axis=1) > 0)


@pytest.mark.parametrize("points,words", [
    ([[0, 0], [1, 0]], "at least 3"),
    ([[0, 0], [1, 0], [1, 0], [0, 1]], "coincide"),
    ([[0, 0], [1, 0], [2, 0]], "no area"),
    ([[0, 0], [2, 2], [2, 0], [0, 1]], "cross"),
])
def test_polygon_problems(points, words):
    assert words in geo.polygon_problem(points)


def test_overlap_and_box_checks():
    a = geo.Circle((0.5, 0.5), 0.1)
    assert geo.shapes_overlap(a, geo.Circle((0.65, 0.5), 0.06))
    assert not geo.shapes_overlap(a, geo.Circle((0.7, 0.5), 0.06))
    sq = geo.Polygon.from_points([[0.0, 0.0], [0.3, 0.0], [0.3, 0.3], [0.0, 0.3]])
    assert geo.shapes_overlap(sq, geo.Circle((0.1, 0.1), 0.05))  # circle inside the square
    assert geo.shapes_overlap(geo.Circle((0.35, 0.1), 0.06), sq)
    assert not geo.shapes_overlap(sq, a)
    assert geo.outside_box(a, 0.55, 1.0) and not geo.outside_box(a, 0.6, 0.6)
