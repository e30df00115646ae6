"""Embedded bodies of a 2-D domain: exact path-surface intersection, containment, cut areas.

A body is a closed polygon or a circle.  The kernels see it as rows of the
element table ``elem`` (columns ``E_*``): one row per polygon edge (a
straight segment from ``(x0, y0)`` to ``(x1, y1)`` with its unit normal
``(nx, ny)`` pointing out of the body, into the gas) or one row for a whole
circle (centre ``(x0, y0)``, radius in column ``E_X1``).  Body ``b`` owns the
rows ``body_elem[b] .. body_elem[b + 1]`` and lies inside the axis-aligned
box ``body_box[b] = (xmin, ymin, xmax, ymax)``.  Each element carries the
index of its first sampling panel and its number of panels: a segment is cut
into equal panels along its length, a circle into equal arcs counted
counter-clockwise from the +x axis.

Intersection (:func:`first_body_hit`).  A particle at ``r`` flying with
velocity ``v`` for the time ``t``:

* meets the line of a segment with outward normal ``n`` at
  ``t_h = ((r - p0) . n) / (-(v . n))`` when it is on the gas side
  (``(r - p0) . n >= 0``) and moving toward the line (``v . n < 0``); the
  hit counts when the hit point's parameter along the segment,
  ``s = (r + v t_h - p0) . (p1 - p0) / |p1 - p0|^2``, lies in ``[0, 1]``
  (widened by ``S_TOL`` so that a path through a vertex shared by two edges
  cannot slip between them);
* meets a circle of centre ``c`` and radius ``R`` where
  ``|r - c + v t|^2 = R^2``: with ``d = r - c``, ``b = d . v``,
  ``a = |v|^2``, ``q = |d|^2 - R^2`` the entering root of
  ``a t^2 + 2 b t + q = 0`` is ``t = (-b - sqrt(b^2 - a q)) / a``, computed
  as ``q / (-b + sqrt(b^2 - a q))`` (same value, no cancellation for
  grazing paths); only paths moving toward the centre (``b < 0``) can enter.

Only the in-plane velocity ``(v_x, v_y)`` matters: bodies are prisms of
unit depth.  The earliest hit within the remaining time wins; the element
just hit is skipped on the next leg (a path leaving a straight segment
cannot meet it again, and a circle is left on an outgoing path, ``b > 0``).
After a hit the caller puts the particle on the surface and moves it a
distance ``eps`` along the normal (:func:`surface_point`), a few orders of
magnitude above round-off and far below any physical length, so that no
particle is ever found inside a body.

Containment (:func:`inside_bodies`): a point is inside a polygon when a ray
from it crosses the boundary an odd number of times (crossing-number test),
inside a circle when closer to the centre than ``R``.

Cut areas: the area of a polygon inside an axis-aligned rectangle is the
area of the polygon clipped by the rectangle (Sutherland and Hodgman 1974,
Commun. ACM 17, 32: clipping by each of the four half-planes in turn; for a
convex clip region the clipped polygon's shoelace area is exact even for a
non-convex subject, whose pieces may be joined by zero-area edges).  The
area of a disc inside a rectangle is exact by inclusion-exclusion of the
quadrant function ``F(X, Y) = area of {|p - c| < R, x < X, y < Y}``,
integrated in closed form in :func:`_disc_quadrant`.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

# element kinds
SEGMENT = 0
CIRCLE = 1

# columns of the element table
E_KIND = 0
E_BODY = 1
E_X0 = 2
E_Y0 = 3
E_X1 = 4  # circle: radius
E_Y1 = 5
E_NX = 6  # segment: outward unit normal
E_NY = 7
E_PANEL0 = 8  # first sampling panel
E_NPANEL = 9  # sampling panels of the element
N_ECOL = 10

S_TOL = 1e-12  # widening of a segment's parameter range (relative to its length)


@nb.njit(cache=True)
def first_body_hit(x, y, vx, vy, t, elem, body_box, body_elem, skip):
    """Earliest body surface met by the path ``(x, y) + (vx, vy) tau``, ``0 <= tau <= t``.

    Returns ``(tau, k)``: the time of the hit and the element row hit, or
    ``(t, -1)`` when the path meets no body (``skip``: an element row to
    ignore, -1 for none).
    """
    best_t = t
    best = -1
    xe = x + vx * t
    ye = y + vy * t
    px0 = min(x, xe)
    px1 = max(x, xe)
    py0 = min(y, ye)
    py1 = max(y, ye)
    for b in range(body_box.shape[0]):
        if (px1 < body_box[b, 0] or px0 > body_box[b, 2] or py1 < body_box[b, 1]
                or py0 > body_box[b, 3]):
            continue
        for k in range(body_elem[b], body_elem[b + 1]):
            if k == skip:
                continue
            e = elem[k]
            if e[E_KIND] == SEGMENT:
                nx = e[E_NX]
                ny = e[E_NY]
                vn = vx * nx + vy * ny
                if vn >= 0.0:
                    continue
                d = (x - e[E_X0]) * nx + (y - e[E_Y0]) * ny
                if d < 0.0:
                    continue  # behind the segment's line: the body's other side
                th = d / (-vn)
                if th >= best_t:
                    continue
                ex = e[E_X1] - e[E_X0]
                ey = e[E_Y1] - e[E_Y0]
                s = ((x + vx * th - e[E_X0]) * ex + (y + vy * th - e[E_Y0]) * ey) / (
                    ex * ex + ey * ey)
                if s < -S_TOL or s > 1.0 + S_TOL:
                    continue
                best_t = th
                best = k
            else:
                dx = x - e[E_X0]
                dy = y - e[E_Y0]
                bb = dx * vx + dy * vy
                if bb >= 0.0:
                    continue
                a = vx * vx + vy * vy
                q = dx * dx + dy * dy - e[E_X1] * e[E_X1]
                disc = bb * bb - a * q
                if disc <= 0.0:
                    continue
                th = max(0.0, q / (-bb + math.sqrt(disc)))
                if th < best_t:
                    best_t = th
                    best = k
    return best_t, best


@nb.njit(cache=True)
def surface_point(x, y, e, eps):
    """Where a particle that met element row ``e`` at ``(x, y)`` is put: ``(x, y, nx, ny,
    panel)``, the point on the surface moved ``eps`` along the outward normal ``(nx, ny)``,
    and the sampling panel hit."""
    if e[E_KIND] == SEGMENT:
        ex = e[E_X1] - e[E_X0]
        ey = e[E_Y1] - e[E_Y0]
        s = ((x - e[E_X0]) * ex + (y - e[E_Y0]) * ey) / (ex * ex + ey * ey)
        s = min(max(s, 0.0), 1.0)
        nx = e[E_NX]
        ny = e[E_NY]
        xs = e[E_X0] + s * ex + eps * nx
        ys = e[E_Y0] + s * ey + eps * ny
        frac = s
    else:
        dx = x - e[E_X0]
        dy = y - e[E_Y0]
        d = math.sqrt(dx * dx + dy * dy)
        if d > 0.0:
            nx = dx / d
            ny = dy / d
        else:
            nx = 1.0
            ny = 0.0
        r = e[E_X1] + eps
        xs = e[E_X0] + r * nx
        ys = e[E_Y0] + r * ny
        ang = math.atan2(ny, nx)
        if ang < 0.0:
            ang += 2.0 * math.pi
        frac = ang / (2.0 * math.pi)
    n_panel = int(e[E_NPANEL])
    panel = int(e[E_PANEL0]) + min(int(frac * n_panel), n_panel - 1)
    return xs, ys, nx, ny, panel


@nb.njit(cache=True)
def inside_bodies(x, y, elem, body_box, body_elem):
    """Index of the body containing ``(x, y)``, or -1 (a point on a surface is outside)."""
    for b in range(body_box.shape[0]):
        if x <= body_box[b, 0] or x >= body_box[b, 2] or y <= body_box[b, 1] or y >= body_box[b, 3]:
            continue
        k0 = body_elem[b]
        if elem[k0, E_KIND] == CIRCLE:
            dx = x - elem[k0, E_X0]
            dy = y - elem[k0, E_Y0]
            if dx * dx + dy * dy < elem[k0, E_X1] * elem[k0, E_X1]:
                return b
            continue
        crossings = 0
        for k in range(k0, body_elem[b + 1]):
            ya = elem[k, E_Y0]
            yb = elem[k, E_Y1]
            if (ya > y) != (yb > y):
                xa = elem[k, E_X0]
                xc = xa + (y - ya) * (elem[k, E_X1] - xa) / (yb - ya)
                if x < xc:
                    crossings += 1
        if crossings % 2 == 1:
            return b
    return -1


@nb.njit(parallel=True, cache=True)
def mark_inside(pos, n, elem, body_box, body_elem, out):
    """``out[i]``: whether position ``i`` of the first ``n`` lies inside a body."""
    for i in nb.prange(n):
        out[i] = inside_bodies(pos[i, 0], pos[i, 1], elem, body_box, body_elem) >= 0


# ----------------------------------------------------------------------------- shape checks


@nb.njit(inline="always")
def _orient(ax, ay, bx, by, cx, cy):
    v = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)
    return 0 if v == 0.0 else (1 if v > 0.0 else -1)


@nb.njit(inline="always")
def _on_segment(ax, ay, bx, by, cx, cy):
    """Whether ``c``, collinear with ``ab``, lies on the closed segment ``ab``."""
    return min(ax, bx) <= cx <= max(ax, bx) and min(ay, by) <= cy <= max(ay, by)


@nb.njit(inline="always")
def segments_meet(ax, ay, bx, by, cx, cy, dx, dy):
    """Whether the closed segments ``ab`` and ``cd`` share a point (orientation tests,
    collinear touching included)."""
    o1 = _orient(ax, ay, bx, by, cx, cy)
    o2 = _orient(ax, ay, bx, by, dx, dy)
    o3 = _orient(cx, cy, dx, dy, ax, ay)
    o4 = _orient(cx, cy, dx, dy, bx, by)
    if o1 != o2 and o3 != o4:
        return True
    return ((o1 == 0 and _on_segment(ax, ay, bx, by, cx, cy))
            or (o2 == 0 and _on_segment(ax, ay, bx, by, dx, dy))
            or (o3 == 0 and _on_segment(cx, cy, dx, dy, ax, ay))
            or (o4 == 0 and _on_segment(cx, cy, dx, dy, bx, by)))


@nb.njit(cache=True)
def first_crossing(px, py):
    """The first pair of non-neighbouring edges ``(i, j)`` of the closed polygon ``px, py``
    that meet, or ``(-1, -1)`` for a simple polygon (edge ``i`` runs from vertex ``i`` to
    ``i + 1``)."""
    k = px.size
    for i in range(k):
        i1 = (i + 1) % k
        for j in range(i + 2, k):
            if i == 0 and j == k - 1:
                continue  # neighbours through vertex 0
            j1 = (j + 1) % k
            if segments_meet(px[i], py[i], px[i1], py[i1], px[j], py[j], px[j1], py[j1]):
                return i, j
    return -1, -1


@nb.njit(cache=True)
def outlines_meet(ax, ay, bx, by):
    """Whether an edge of the closed polygon ``ax, ay`` meets an edge of ``bx, by``."""
    ka = ax.size
    kb_ = bx.size
    for i in range(ka):
        i1 = (i + 1) % ka
        for j in range(kb_):
            j1 = (j + 1) % kb_
            if segments_meet(ax[i], ay[i], ax[i1], ay[i1], bx[j], by[j], bx[j1], by[j1]):
                return True
    return False


# ----------------------------------------------------------------------------- cut areas


@nb.njit(cache=True)
def _clip(xs, ys, m, axis, bound, keep_below, ox, oy):
    """Sutherland-Hodgman clip of the ``m``-vertex polygon ``xs, ys`` by the half-plane
    ``coord <= bound`` (``keep_below``) or ``coord >= bound``; writes to ``ox, oy``, returns
    the new vertex count."""
    out = 0
    for i in range(m):
        j = (i + 1) % m
        ci = xs[i] if axis == 0 else ys[i]
        cj = xs[j] if axis == 0 else ys[j]
        in_i = ci <= bound if keep_below else ci >= bound
        in_j = cj <= bound if keep_below else cj >= bound
        if in_i:
            ox[out] = xs[i]
            oy[out] = ys[i]
            out += 1
        if in_i != in_j:
            f = (bound - ci) / (cj - ci)
            if axis == 0:
                ox[out] = bound
                oy[out] = ys[i] + f * (ys[j] - ys[i])
            else:
                ox[out] = xs[i] + f * (xs[j] - xs[i])
                oy[out] = bound
            out += 1
    return out


@nb.njit(cache=True)
def polygon_rect_area(px, py, x0, y0, x1, y1):
    """Area of the polygon (vertices ``px, py``, either orientation) inside the rectangle
    ``[x0, x1] x [y0, y1]``."""
    m = px.size
    cap = 2 * m + 8
    ax = np.empty(cap)
    ay = np.empty(cap)
    bx = np.empty(cap)
    by = np.empty(cap)
    ax[:m] = px
    ay[:m] = py
    m = _clip(ax, ay, m, 0, x0, False, bx, by)
    m = _clip(bx, by, m, 0, x1, True, ax, ay)
    m = _clip(ax, ay, m, 1, y0, False, bx, by)
    m = _clip(bx, by, m, 1, y1, True, ax, ay)
    area = 0.0
    for i in range(m):
        j = (i + 1) % m
        area += ax[i] * ay[j] - ax[j] * ay[i]
    return abs(0.5 * area)


@nb.njit(cache=True)
def _half_chord_integral(x, r):
    """``G(x) = int_0^x sqrt(r^2 - s^2) ds = (x h + r^2 asin(x / r)) / 2`` for ``|x| <= r``."""
    x = min(max(x, -r), r)
    h = math.sqrt(max(r * r - x * x, 0.0))
    return 0.5 * (x * h + r * r * math.asin(x / r))


@nb.njit(cache=True)
def _disc_quadrant(X, Y, r):
    """Area of the disc ``x^2 + y^2 < r^2`` with ``x < X`` and ``y < Y``.

    With ``h(x) = sqrt(r^2 - x^2)`` the chord at ``x`` below ``Y`` is ``2 h``
    where ``Y >= h``, ``Y + h`` where ``-h < Y < h`` and 0 where ``Y <= -h``;
    for ``|Y| < r`` the middle case holds for ``|x| < a = sqrt(r^2 - Y^2)``,
    the first outside it if ``Y >= 0`` (else the last).  Each piece is
    integrated with ``G`` of :func:`_half_chord_integral`.
    """
    if X <= -r or Y <= -r:
        return 0.0
    X = min(X, r)
    if Y >= r:
        return 2.0 * (_half_chord_integral(X, r) - _half_chord_integral(-r, r))
    a = math.sqrt(r * r - Y * Y)
    area = 0.0
    # middle piece |x| < a: chord Y + h
    lo = -a
    hi = min(X, a)
    if hi > lo:
        area += Y * (hi - lo) + _half_chord_integral(hi, r) - _half_chord_integral(lo, r)
    if Y > 0.0:
        # outer pieces |x| >= a: chord 2 h
        hi = min(X, -a)
        area += 2.0 * (_half_chord_integral(hi, r) - _half_chord_integral(-r, r))
        if X > a:
            area += 2.0 * (_half_chord_integral(X, r) - _half_chord_integral(a, r))
    return area


@nb.njit(cache=True)
def circle_rect_area(cx, cy, r, x0, y0, x1, y1):
    """Area of the disc of centre ``(cx, cy)`` and radius ``r`` inside ``[x0, x1] x [y0, y1]``,
    by inclusion-exclusion of :func:`_disc_quadrant` at the four corners."""
    a0 = x0 - cx
    a1 = x1 - cx
    b0 = y0 - cy
    b1 = y1 - cy
    area = (_disc_quadrant(a1, b1, r) - _disc_quadrant(a0, b1, r) - _disc_quadrant(a1, b0, r)
            + _disc_quadrant(a0, b0, r))
    return max(area, 0.0)


@nb.njit(cache=True)
def body_cell_areas(kind, px, py, cx, cy, r, x_edges, y_edges, out):
    """Add the area of one body inside each cell of a rectilinear grid to ``out`` (ny, nx).

    ``kind`` is ``SEGMENT`` for a polygon (vertices ``px, py``) or ``CIRCLE``
    (centre ``cx, cy``, radius ``r``).  Only cells overlapping the body's
    bounding box are visited.
    """
    if kind == CIRCLE:
        bx0, bx1, by0, by1 = cx - r, cx + r, cy - r, cy + r
    else:
        bx0, bx1, by0, by1 = px.min(), px.max(), py.min(), py.max()
    nx = x_edges.size - 1
    ny = y_edges.size - 1
    for iy in range(ny):
        if y_edges[iy + 1] <= by0 or y_edges[iy] >= by1:
            continue
        for ix in range(nx):
            if x_edges[ix + 1] <= bx0 or x_edges[ix] >= bx1:
                continue
            if kind == CIRCLE:
                a = circle_rect_area(cx, cy, r, x_edges[ix], y_edges[iy], x_edges[ix + 1],
                                     y_edges[iy + 1])
            else:
                a = polygon_rect_area(px, py, x_edges[ix], y_edges[iy], x_edges[ix + 1],
                                      y_edges[iy + 1])
            out[iy, ix] += a
