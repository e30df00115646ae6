"""Embedded bodies of a 2-D domain: shapes, sampling panels, cut cells, kernel tables.

A body is a :class:`Polygon` (vertex list, stored counter-clockwise) or a
:class:`Circle`, a prism of unit depth in z like the domain.  This module
turns shapes into

* the element table, body boxes and panel layout that the move kernel uses
  (:func:`body_tables`, columns in :mod:`dsmc.kernels.bodies`);
* the cut-cell volumes: each cell's area outside every body, times the unit
  depth, computed once, exactly (:func:`cut_volumes`); a cell entirely inside
  a body has volume 0 and is excluded from collisions and sampling;
* the panel geometry written with the surface results (:class:`Panels`);
* checks of a shape as given in a case file (:func:`polygon_problem`,
  :func:`shapes_overlap`, :func:`outside_box`), which :mod:`dsmc.case` turns
  into one-line errors.

Sampling panels: a polygon's ``panels`` are shared out over its edges in
proportion to their length (at least one per edge), each edge cut into equal
panels; a circle is cut into ``panels`` equal arcs counted counter-clockwise
from the +x axis.  A panel's tangent is its outward normal turned by +90
degrees, ``t = (-n_y, n_x)``: counter-clockwise along the body outline.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from dsmc.kernels import bodies as kb


@dataclass(frozen=True)
class Polygon:
    """A simple polygon; ``vertices`` counter-clockwise, the last not repeating the first."""

    vertices: tuple[tuple[float, float], ...]

    @staticmethod
    def from_points(points) -> "Polygon":
        """A polygon from ``(k, 2)`` points in either orientation (stored counter-clockwise)."""
        p = np.asarray(points, dtype=float).reshape(-1, 2)
        if len(p) > 1 and np.all(p[0] == p[-1]):
            p = p[:-1]
        if signed_area(p) < 0.0:
            p = p[::-1]
        return Polygon(tuple((float(a), float(b)) for a, b in p))

    @property
    def points(self) -> np.ndarray:
        return np.array(self.vertices, dtype=float)

    @property
    def area(self) -> float:
        return signed_area(self.points)

    @property
    def box(self) -> tuple[float, float, float, float]:
        p = self.points
        return float(p[:, 0].min()), float(p[:, 1].min()), float(p[:, 0].max()), float(p[:, 1].max())

    @property
    def perimeter(self) -> float:
        p = self.points
        return float(np.sum(np.hypot(*(np.roll(p, -1, axis=0) - p).T)))

    @property
    def size(self) -> float:
        """Largest distance between two vertices (the chord of a plate)."""
        p = self.points
        d = p[:, None, :] - p[None, :, :]
        return float(np.sqrt((d ** 2).sum(-1)).max())


@dataclass(frozen=True)
class Circle:
    center: tuple[float, float]
    radius: float

    @property
    def area(self) -> float:
        return math.pi * self.radius ** 2

    @property
    def box(self) -> tuple[float, float, float, float]:
        (cx, cy), r = self.center, self.radius
        return cx - r, cy - r, cx + r, cy + r

    @property
    def perimeter(self) -> float:
        return 2.0 * math.pi * self.radius

    @property
    def size(self) -> float:
        """The diameter."""
        return 2.0 * self.radius


Shape = Polygon | Circle


def signed_area(points: np.ndarray) -> float:
    """Shoelace area, positive for counter-clockwise vertices."""
    x, y = points[:, 0], points[:, 1]
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


# ------------------------------------------------------------------------------ panels


def edge_panels(shape: Polygon, panels: int) -> np.ndarray:
    """Panels of each edge of a polygon: ``panels`` shared out by edge length, at least one."""
    p = shape.points
    lengths = np.hypot(*(np.roll(p, -1, axis=0) - p).T)
    return np.maximum(1, np.rint(panels * lengths / lengths.sum())).astype(int)


@dataclass(frozen=True)
class Panels:
    """Geometry of the sampling panels of all bodies, in panel order.

    ``center`` (P, 2) panel mid-points, ``normal`` (P, 2) outward unit
    normals there, ``length`` (P,) panel lengths (area per unit depth),
    ``body`` (P,) body index, ``arc`` (P,) distance along the body outline
    from its first vertex (polygon) or from the +x axis (circle) to the panel
    mid-point, ``angle`` (P,) polar angle of the mid-point about the body's
    centroid (rad, in [0, 2 pi)).
    """

    center: np.ndarray
    normal: np.ndarray
    length: np.ndarray
    body: np.ndarray
    arc: np.ndarray
    angle: np.ndarray

    @property
    def tangent(self) -> np.ndarray:
        return np.column_stack([-self.normal[:, 1], self.normal[:, 0]])


@dataclass(frozen=True)
class BodyTables:
    """What the kernels see (:mod:`dsmc.kernels.bodies`): ``elem`` (E, N_ECOL),
    ``box`` (B, 4), ``first`` (B + 1) element ranges, and the panel geometry."""

    elem: np.ndarray
    box: np.ndarray
    first: np.ndarray
    panels: Panels

    @property
    def n_panels(self) -> int:
        return int(self.panels.length.size)


def _centroid(shape: Shape) -> np.ndarray:
    if isinstance(shape, Circle):
        return np.array(shape.center, dtype=float)
    p = shape.points
    x, y = p[:, 0], p[:, 1]
    cross = x * np.roll(y, -1) - np.roll(x, -1) * y
    a = 0.5 * cross.sum()
    return np.array([np.sum((x + np.roll(x, -1)) * cross), np.sum((y + np.roll(y, -1)) * cross)]) / (6.0 * a)


def empty_tables() -> BodyTables:
    """The tables of a domain without bodies (the kernels take the same arrays, empty)."""
    return BodyTables(np.zeros((0, kb.N_ECOL)), np.zeros((0, 4)), np.zeros(1, dtype=np.int64),
                      Panels(*(np.zeros((0, 2)),) * 2, *(np.zeros(0),) * 4))


def body_tables(shapes, panels) -> BodyTables:
    """Kernel tables of ``shapes`` with ``panels[b]`` sampling panels requested for body ``b``."""
    rows, boxes, first = [], [], [0]
    centers, normals, lengths, owner, arcs = [], [], [], [], []
    n_panel = 0
    for b, (shape, want) in enumerate(zip(shapes, panels)):
        boxes.append(shape.box)
        start = n_panel
        if isinstance(shape, Circle):
            (cx, cy), r = shape.center, shape.radius
            row = np.zeros(kb.N_ECOL)
            row[[kb.E_KIND, kb.E_BODY, kb.E_X0, kb.E_Y0, kb.E_X1]] = kb.CIRCLE, b, cx, cy, r
            row[kb.E_PANEL0], row[kb.E_NPANEL] = n_panel, want
            rows.append(row)
            mid = (np.arange(want) + 0.5) * 2.0 * math.pi / want
            n = np.column_stack([np.cos(mid), np.sin(mid)])
            centers.append(np.array([cx, cy]) + r * n)
            normals.append(n)
            lengths.append(np.full(want, 2.0 * math.pi * r / want))
            arcs.append(r * mid)
            n_panel += want
        else:
            p = shape.points
            counts = edge_panels(shape, want)
            s0 = 0.0
            for k in range(len(p)):
                a, e = p[k], p[(k + 1) % len(p)]
                d = e - a
                length = float(np.hypot(*d))
                normal = np.array([d[1], -d[0]]) / length  # right of the edge: out of a CCW polygon
                m = int(counts[k])
                row = np.zeros(kb.N_ECOL)
                row[[kb.E_KIND, kb.E_BODY, kb.E_X0, kb.E_Y0, kb.E_X1, kb.E_Y1]] = (
                    kb.SEGMENT, b, a[0], a[1], e[0], e[1])
                row[kb.E_NX], row[kb.E_NY] = normal
                row[kb.E_PANEL0], row[kb.E_NPANEL] = n_panel, m
                rows.append(row)
                f = (np.arange(m) + 0.5) / m
                centers.append(a + f[:, None] * d)
                normals.append(np.tile(normal, (m, 1)))
                lengths.append(np.full(m, length / m))
                arcs.append(s0 + f * length)
                s0 += length
                n_panel += m
        first.append(len(rows))
        owner.append(np.full(n_panel - start, b))
    center = np.concatenate(centers) if centers else np.zeros((0, 2))
    body = np.concatenate(owner).astype(np.int64) if owner else np.zeros(0, dtype=np.int64)
    angle = np.zeros(len(center))
    for b, shape in enumerate(shapes):
        sel = body == b
        rel = center[sel] - _centroid(shape)
        angle[sel] = np.mod(np.arctan2(rel[:, 1], rel[:, 0]), 2.0 * math.pi)
    panel_set = Panels(center, np.concatenate(normals) if normals else np.zeros((0, 2)),
                       np.concatenate(lengths) if lengths else np.zeros(0), body,
                       np.concatenate(arcs) if arcs else np.zeros(0), angle)
    return BodyTables(np.array(rows, dtype=float).reshape(-1, kb.N_ECOL),
                      np.array(boxes, dtype=float).reshape(-1, 4),
                      np.array(first, dtype=np.int64), panel_set)


# ------------------------------------------------------------------------------ cut cells


def body_areas(shapes, x_edges: np.ndarray, y_edges: np.ndarray) -> np.ndarray:
    """Area of the bodies inside each cell, shape ``(ny, nx)`` (bodies do not overlap)."""
    out = np.zeros((y_edges.size - 1, x_edges.size - 1))
    for shape in shapes:
        if isinstance(shape, Circle):
            empty = np.zeros(0)
            kb.body_cell_areas(kb.CIRCLE, empty, empty, shape.center[0], shape.center[1],
                               shape.radius, x_edges, y_edges, out)
        else:
            p = shape.points
            kb.body_cell_areas(kb.SEGMENT, np.ascontiguousarray(p[:, 0]),
                               np.ascontiguousarray(p[:, 1]), 0.0, 0.0, 0.0, x_edges, y_edges, out)
    return out


# A cell whose gas area is below this fraction of the cell is treated as inside a body:
# volume 0, no particles, no collisions, no samples (areas that small are round-off of a
# cell that a body covers)
EMPTY_FRACTION = 1e-12


def cut_volumes(shapes, x_edges: np.ndarray, y_edges: np.ndarray, depth: float = 1.0) -> np.ndarray:
    """Gas volume of each cell, flat order ``ix + nx * iy``: cell area minus the body area
    inside it, times ``depth``; 0 for cells a body covers."""
    dx = np.diff(x_edges)
    dy = np.diff(y_edges)
    full = np.outer(dy, dx)
    gas = full - body_areas(shapes, x_edges, y_edges)
    gas[gas <= EMPTY_FRACTION * full] = 0.0
    return (gas * depth).ravel()


def contains(tables: BodyTables, xy: np.ndarray) -> np.ndarray:
    """Body index containing each point of ``xy`` (k, 2), -1 outside every body."""
    out = np.empty(len(xy), dtype=np.int64)
    for i, (x, y) in enumerate(np.asarray(xy, dtype=float)):
        out[i] = kb.inside_bodies(x, y, tables.elem, tables.box, tables.first)
    return out


# ------------------------------------------------------------------------------ checks


def polygon_problem(points) -> str | None:
    """What is wrong with a polygon's vertex list (``None`` when it is a simple polygon)."""
    p = np.asarray(points, dtype=float).reshape(-1, 2)
    if len(p) > 1 and np.all(p[0] == p[-1]):
        p = p[:-1]
    if len(p) < 3:
        return f"a polygon needs at least 3 vertices, got {len(p)}"
    k = len(p)
    for i in range(k):
        if np.all(p[i] == p[(i + 1) % k]):
            return f"vertices {i} and {(i + 1) % k} coincide"
    scale = max(np.ptp(p[:, 0]), np.ptp(p[:, 1]))
    if abs(signed_area(p)) <= 1e-12 * scale * scale:
        return "the polygon has no area"
    i, j = kb.first_crossing(np.ascontiguousarray(p[:, 0]), np.ascontiguousarray(p[:, 1]))
    if i >= 0:
        return f"edges {i} and {j} cross: the polygon must not intersect itself"
    return None


def _edges(shape: Polygon):
    p = shape.points
    return [(p[i], p[(i + 1) % len(p)]) for i in range(len(p))]


def _segment_distance(c, a, b) -> float:
    d = b - a
    s = np.clip(np.dot(c - a, d) / np.dot(d, d), 0.0, 1.0)
    return float(np.hypot(*(a + s * d - c)))


def _point_in(shape: Shape, point) -> bool:
    if isinstance(shape, Circle):
        return math.dist(point, shape.center) <= shape.radius
    t = body_tables([shape], [1])
    return kb.inside_bodies(float(point[0]), float(point[1]), t.elem, t.box, t.first) >= 0


def shapes_overlap(a: Shape, b: Shape) -> bool:
    """Whether two shapes overlap or touch (their outlines meet, or one contains the other)."""
    if isinstance(a, Circle) and isinstance(b, Circle):
        return math.dist(a.center, b.center) <= a.radius + b.radius
    if isinstance(a, Circle):
        a, b = b, a
    if isinstance(b, Circle):  # a is a polygon
        c = np.array(b.center)
        if any(_segment_distance(c, p, q) <= b.radius for p, q in _edges(a)):
            return True
        return _point_in(a, b.center) or _point_in(b, a.vertices[0])
    pa, pb = a.points, b.points
    if kb.outlines_meet(*(np.ascontiguousarray(c) for c in (pa[:, 0], pa[:, 1], pb[:, 0], pb[:, 1]))):
        return True
    return _point_in(a, b.vertices[0]) or _point_in(b, a.vertices[0])


def outside_box(shape: Shape, lx: float, ly: float) -> bool:
    """Whether a shape reaches outside the domain ``[0, lx] x [0, ly]`` (touching a side is
    allowed)."""
    x0, y0, x1, y1 = shape.box
    return x0 < 0.0 or y0 < 0.0 or x1 > lx or y1 > ly
