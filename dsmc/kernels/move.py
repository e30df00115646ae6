"""Ballistic move with exact wall-hit times.

A particle flies in a straight line for the time step; when its path crosses a
wall, it is moved to the hit point, re-emitted by the wall model
(:func:`dsmc.kernels.surfaces.reflect`) and flies the rest of the step with the
new velocity, so several hits in one step are handled exactly.  What each wall
receives (hits, momentum, energy) is accumulated per particle block and per
wall into ``acc[block, wall, :]``:

    0: hits   1..3: m (v_in - v_out)   4: m (|v_in|^2 - |v_out|^2) / 2 + e_int,in - e_int,out

An open side (model code ``OPEN``) removes the particle: it is counted as a
hit with ``v_out = 0`` (so the accumulator holds the number, momentum and
energy that left) and marked removed by ``pos[i, 0] = -1``; its cell key is
the extra bin ``n_cells``, which the sort puts last and the caller drops.

In 2-D (:func:`move_2d`) the four sides are rows 0..3 (xmin, xmax, ymin,
ymax) and the same accumulator layout has four walls per block.  Molecules
entering a 2-D box through an open side fly their first partial step through
the same flight routine (:func:`inject_2d`).

Particle ``i`` belongs to block ``i // block_size``, and block ``b`` draws its
random numbers from stream ``b``: the result does not depend on how blocks are
spread over threads.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

from dsmc.kernels.bodies import E_BODY, first_body_hit, surface_point
from dsmc.kernels.inject import K_B, add_injected, entering_velocity
from dsmc.kernels.rng import uniform, uniform_open0
from dsmc.kernels.sort import chunk_layout
from dsmc.kernels.surfaces import OPEN, PERIODIC, W_MODEL, reemit_internal, reflect

N_WALL_ACC = 5
# wall hits one particle may make in one step; reached only by absurd time steps, where the
# remaining flight time no longer decreases in floating point (the particle then stays at the wall)
MAX_HITS = 100_000


@nb.njit(inline="always")
def _hit(v, wall, nx, ny, mass, state, b, acc_row, erot, vib, i, rot_dof, theta_vib):
    e_in = v[0] * v[0] + v[1] * v[1] + v[2] * v[2]
    p0 = v[0]
    p1 = v[1]
    p2 = v[2]
    used = reflect(v, nx, ny, wall, mass, state, b)
    de = reemit_internal(erot, vib, i, used, wall, rot_dof, theta_vib, state, b)
    acc_row[0] += 1.0
    acc_row[1] += mass * (p0 - v[0])
    acc_row[2] += mass * (p1 - v[1])
    acc_row[3] += mass * (p2 - v[2])
    acc_row[4] += 0.5 * mass * (e_in - (v[0] * v[0] + v[1] * v[1] + v[2] * v[2])) + de


@nb.njit(inline="always")
def _leave(v, mass, e_int, acc_row):
    acc_row[0] += 1.0
    acc_row[1] += mass * v[0]
    acc_row[2] += mass * v[1]
    acc_row[3] += mass * v[2]
    acc_row[4] += 0.5 * mass * (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]) + e_int


@nb.njit(cache=True)
def _fly(pos, v, erot, vib, i, dt, length, walls, m, rot_dof, theta_vib, state, b, acc):
    """Flight of particle ``i`` that crosses a wall during the step: hit by hit.
    Returns the final position, -1 when the particle left through an open side."""
    vi = v[i]
    xi = pos[i, 0]
    t = dt
    hits = 0
    open0 = int(walls[0, W_MODEL]) == OPEN
    open1 = int(walls[1, W_MODEL]) == OPEN
    e_int = 0.0
    if (open0 or open1) and (rot_dof > 0 or theta_vib > 0.0):
        e_int = erot[i] + vib[i] * 1.380649e-23 * theta_vib
    while True:
        xn = xi + vi[0] * t
        if xn < 0.0 and open0:
            _leave(vi, m, e_int, acc[b, 0])
            return -1.0
        elif xn > length and open1:
            _leave(vi, m, e_int, acc[b, 1])
            return -1.0
        elif xn < 0.0:
            t -= xi / (-vi[0])
            xi = 0.0
            _hit(vi, walls[0], 1.0, 0.0, m, state, b, acc[b, 0], erot, vib, i, rot_dof, theta_vib)
        elif xn > length:
            t -= (length - xi) / vi[0]
            xi = length
            _hit(vi, walls[1], -1.0, 0.0, m, state, b, acc[b, 1], erot, vib, i, rot_dof, theta_vib)
        else:
            xi = xn
            break
        hits += 1
        if t <= 0.0 or hits >= MAX_HITS:
            break
    return xi


@nb.njit(inline="always")
def _chunk_blocks(hist, ch, n_keys, size, n, block_size, acc, n_sides):
    """Clear chunk ``ch``'s histogram row and its blocks' wall accumulators; return the
    chunk's particle range ``(lo, hi)`` (chunks are runs of whole blocks)."""
    row = hist[ch]
    for k in range(n_keys):
        row[k] = 0
    lo = ch * size
    hi = min(n, lo + size)
    for b in range(lo // block_size, (hi + block_size - 1) // block_size):
        for w in range(n_sides):
            for k in range(N_WALL_ACC):
                acc[b, w, k] = 0.0
    return lo, hi


@nb.njit(parallel=True, cache=True)
def move_1d(pos, v, sp, erot, vib, n, dt, length, walls, mass, rot_dof, theta_vib, state,
            block_size, acc, n_cells, key, hist):
    """Advance particles ``0..n-1`` of a 1-D slab ``0 <= x <= length`` by ``dt``.

    ``pos`` has shape (n, 1); ``v`` (n, 3).

    ``walls`` has two rows (x = 0, x = length); a periodic pair wraps instead.
    ``mass[sp[i]]`` is the molecular mass of particle ``i``; ``erot`` / ``vib``
    its internal energy (empty arrays when no species has any), re-emitted
    with ``rot_dof[sp[i]]`` (int) and ``theta_vib[sp[i]]`` (K, 0 = off).
    ``acc`` has shape ``(n_blocks, 2, N_WALL_ACC)`` and is overwritten.

    The new cell of each particle (``n_cells`` uniform cells; ``n_cells`` for
    a removed one) goes to ``key[i]``, and ``hist`` (``n_cells + 1`` columns)
    receives the per-chunk key histogram of
    :func:`dsmc.kernels.sort.histogram`, so that the sort only has to scatter.
    Particles are moved chunk by chunk (chunks are runs of whole blocks, one
    thread each), so the histogram rows need no locking.
    """
    n_chunks, size = chunk_layout(n, block_size, n_cells + 1)
    periodic = int(walls[0, W_MODEL]) == PERIODIC
    scale = n_cells / length
    for ch in nb.prange(n_chunks):
        c_lo, c_hi = _chunk_blocks(hist, ch, n_cells + 1, size, n, block_size, acc, 2)
        row = hist[ch]
        for b in range(c_lo // block_size, (c_hi + block_size - 1) // block_size):
            for i in range(b * block_size, min(c_hi, (b + 1) * block_size)):
                x = pos[i, 0] + v[i, 0] * dt
                if periodic:
                    x = x % length
                elif x < 0.0 or x > length:
                    si = sp[i]
                    x = _fly(pos, v, erot, vib, i, dt, length, walls, mass[si], rot_dof[si],
                             theta_vib[si], state, b, acc)
                pos[i, 0] = x
                if x < 0.0:  # left through an open side
                    k = n_cells
                else:
                    k = min(int(x * scale), n_cells - 1)
                key[i] = k
                row[k] += 1


@nb.njit(cache=True)
def _fly_2d(pos, v, erot, vib, i, dt, lx, ly, walls, per_x, per_y, m, rot_dof, theta_vib,
            state, b, acc, elem, body_box, body_first, body_walls, surf, eps):
    """Flight of particle ``i`` of a 2-D box for the time ``dt``, hit by hit.

    The straight path ``r + v t`` meets the side ``x = 0`` at ``t = -x / v_x``
    (``v_x < 0``), ``x = lx`` at ``(lx - x) / v_x`` (``v_x > 0``), likewise in
    y, and the surface of an embedded body where
    :func:`dsmc.kernels.bodies.first_body_hit` finds it (``elem``,
    ``body_box``, ``body_first``: the body tables, empty without bodies); the
    earliest event within the remaining time is taken.  On a wall the
    particle is put on it (its coordinate normal to the side set exactly to
    the side) and re-emitted, and the rest of the step is flown with the new
    velocity.  On a body it is put on the surface, ``eps`` out along the
    normal (:func:`dsmc.kernels.bodies.surface_point`), and re-emitted by the
    body's wall row ``body_walls[body]``; what the panel receives goes to
    ``surf[panel]``.  On an open side it leaves: what it carries goes to
    ``acc[b, side]`` (:func:`_leave`), its position stays the crossing point
    and the caller marks it removed.  A corner (x and y crossings at the same
    time) is deterministic: the x side first, then the y side at zero
    remaining distance.  Without bodies a periodic axis has no crossing: its
    coordinate is wrapped by the caller (so it may lie outside the box on
    return); with bodies the crossing is an event, the particle is wrapped
    there and flies on, so that bodies near a periodic side are met on the
    wrapped path.  Writes the final position to ``pos[i]`` and returns
    whether the particle left through an open side.  ``state``/``b``: the
    random stream of re-emissions, also the first index of ``acc``.
    """
    vi = v[i]
    x = pos[i, 0]
    y = pos[i, 1]
    t = dt
    hits = 0
    bodies = body_box.shape[0] > 0
    skip = -1  # the body element just left: a path leaving a surface cannot meet it again
    while True:
        tx = t + 1.0  # no x crossing within the remaining time
        ty = t + 1.0
        if bodies or not per_x:
            xn = x + vi[0] * t
            if xn < 0.0:
                tx = max(0.0, -x / vi[0])
            elif xn > lx:
                tx = max(0.0, (lx - x) / vi[0])
        if bodies or not per_y:
            yn = y + vi[1] * t
            if yn < 0.0:
                ty = max(0.0, -y / vi[1])
            elif yn > ly:
                ty = max(0.0, (ly - y) / vi[1])
        th = t + 1.0
        k = -1
        if bodies:
            th, k = first_body_hit(x, y, vi[0], vi[1], min(t, tx, ty), elem, body_box, body_first,
                                   skip)
            if k < 0:
                th = t + 1.0
        if tx > t and ty > t and th > t:
            x += vi[0] * t
            y += vi[1] * t
            break
        if k >= 0:
            t -= th
            x, y, nx, ny, panel = surface_point(x + vi[0] * th, y + vi[1] * th, elem[k], eps)
            _hit(vi, body_walls[int(elem[k, E_BODY])], nx, ny, m, state, b, surf[panel], erot,
                 vib, i, rot_dof, theta_vib)
            skip = k
        else:
            skip = -1
            if tx <= ty:
                y += vi[1] * tx
                t -= tx
                if vi[0] < 0.0:
                    x = 0.0
                    w, nx, ny = 0, 1.0, 0.0
                else:
                    x = lx
                    w, nx, ny = 1, -1.0, 0.0
                if per_x:  # only with bodies: wrap at the crossing and fly on
                    x = lx - x
                    hits += 1
                    if hits >= MAX_HITS:
                        break
                    continue
            else:
                x += vi[0] * ty
                t -= ty
                if vi[1] < 0.0:
                    y = 0.0
                    w, nx, ny = 2, 0.0, 1.0
                else:
                    y = ly
                    w, nx, ny = 3, 0.0, -1.0
                if per_y:
                    y = ly - y
                    hits += 1
                    if hits >= MAX_HITS:
                        break
                    continue
            if int(walls[w, W_MODEL]) == OPEN:
                e_int = 0.0
                if rot_dof > 0 or theta_vib > 0.0:
                    e_int = erot[i] + vib[i] * K_B * theta_vib
                _leave(vi, m, e_int, acc[b, w])
                pos[i, 0] = x
                pos[i, 1] = y
                return True
            _hit(vi, walls[w], nx, ny, m, state, b, acc[b, w], erot, vib, i, rot_dof, theta_vib)
        hits += 1
        if t <= 0.0 or hits >= MAX_HITS:
            break
    pos[i, 0] = x
    pos[i, 1] = y
    return False


@nb.njit(inline="always")
def _near_body(x0, y0, x1, y1, body_box):
    """Whether the segment's bounding box overlaps a body's box."""
    px0 = min(x0, x1)
    px1 = max(x0, x1)
    py0 = min(y0, y1)
    py1 = max(y0, y1)
    for b in range(body_box.shape[0]):
        if not (px1 < body_box[b, 0] or px0 > body_box[b, 2] or py1 < body_box[b, 1]
                or py0 > body_box[b, 3]):
            return True
    return False


@nb.njit(parallel=True, cache=True)
def move_2d(pos, v, sp, erot, vib, n, dt, lx, ly, walls, mass, rot_dof, theta_vib, state,
            block_size, acc, nx, ny, key, hist, elem, body_box, body_first, body_walls, surf_acc,
            eps):
    """Advance particles ``0..n-1`` of a 2-D box ``[0, lx] x [0, ly]`` by ``dt``.

    The 2-D counterpart of :func:`move_1d`, with the same arguments except:
    ``pos`` has shape (n, 2); ``walls`` has four rows (xmin, xmax, ymin, ymax),
    a periodic pair wraps its axis; ``acc`` has shape
    ``(n_blocks, 4, N_WALL_ACC)``; the grid has ``nx`` x ``ny`` cells and the
    key of a particle in cell ``(ix, iy)`` is ``ix + nx * iy``
    (:func:`dsmc.kernels.sort.keys_2d`), with the histogram (``nx * ny + 1``
    columns, the last one the removed-particle bin) of the same chunks and
    blocks.  Only a particle whose straight flight ends outside the box, or
    (with embedded bodies) passes through a body's bounding box, goes through
    :func:`_fly_2d`.

    Embedded bodies: ``elem``, ``body_box``, ``body_first`` are the tables of
    :mod:`dsmc.kernels.bodies` (empty arrays without bodies), ``body_walls``
    one wall row per body, ``surf_acc`` (rows, panels, N_WALL_ACC) the panel
    accumulators, row ``ch`` for chunk ``ch`` (added to, not cleared: the
    caller clears them), ``eps`` the distance from a surface at which a
    re-emitted particle is put.

    A particle that leaves through an open side is marked removed
    (``pos[i, 0] = -1``, key ``nx * ny``, counted in that histogram bin) after
    its chunk has been moved: the particle loop treats it like any other (it
    ends on the side, inside the box) and threads it onto the chunk's list of
    removed particles, the link stored in its ``v[i, 0]`` (its velocity has
    been counted by :func:`_leave` and is not used again).  Marking it inside
    the loop instead (a branch on the flight's result before the key) made
    the loop 3 to 5 % slower for particles that hit nothing, in five runs on a
    walls-only box of 2e6 particles, one thread; this way it is as fast as
    before open sides existed (ratio 0.93 to 1.01 in five runs of the same
    benchmark).
    """
    n_chunks, size = chunk_layout(n, block_size, nx * ny + 1)
    per_x = int(walls[0, W_MODEL]) == PERIODIC
    per_y = int(walls[2, W_MODEL]) == PERIODIC
    bodies = body_box.shape[0] > 0
    n_cells = nx * ny
    sx = nx / lx
    sy = ny / ly
    gone = np.empty(n_chunks, dtype=np.int64)  # per chunk: last removed particle, -1: none
    for ch in nb.prange(n_chunks):
        c_lo, c_hi = _chunk_blocks(hist, ch, n_cells + 1, size, n, block_size, acc, 4)
        row = hist[ch]
        surf = surf_acc[ch]
        gone[ch] = -1
        for b in range(c_lo // block_size, (c_hi + block_size - 1) // block_size):
            for i in range(b * block_size, min(c_hi, (b + 1) * block_size)):
                x = pos[i, 0] + v[i, 0] * dt
                y = pos[i, 1] + v[i, 1] * dt
                if bodies:
                    fly = (x < 0.0 or x > lx or y < 0.0 or y > ly
                           or _near_body(pos[i, 0], pos[i, 1], x, y, body_box))
                else:
                    fly = ((not per_x and (x < 0.0 or x > lx))
                           or (not per_y and (y < 0.0 or y > ly)))
                if fly:
                    si = sp[i]
                    if _fly_2d(pos, v, erot, vib, i, dt, lx, ly, walls, per_x, per_y, mass[si],
                               rot_dof[si], theta_vib[si], state, b, acc, elem, body_box,
                               body_first, body_walls, surf, eps):
                        v[i, 0] = gone[ch]  # left through an open side: onto the list
                        gone[ch] = i
                    x = pos[i, 0]
                    y = pos[i, 1]
                if per_x:
                    x = x % lx
                if per_y:
                    y = y % ly
                pos[i, 0] = x
                pos[i, 1] = y
                k = min(int(x * sx), nx - 1) + nx * min(int(y * sy), ny - 1)
                key[i] = k
                row[k] += 1
        i = gone[ch]
        while i >= 0:  # the chunk's removed particles: to the removed-particle bin
            row[key[i]] -= 1
            key[i] = n_cells
            row[n_cells] += 1
            pos[i, 0] = -1.0
            i = int(v[i, 0])


@nb.njit(cache=True)
def inject_2d(pos, v, sp, erot, vib, start, counts, side, face_size, face_u, temperature, mass,
              species, lx, ly, walls, dt, rot_dof, theta_vib, state, acc, wall_acc, elem,
              body_box, body_first, body_walls, surf, eps):
    """Write ``counts.sum()`` molecules entering a 2-D box through ``side`` at ``start..``.

    ``side`` is 0..3 (xmin, xmax, ymin, ymax); the side is cut into the faces
    of the cells along it, face ``f`` spanning ``[f, f + 1) * face_size``
    along the side, and ``counts[f]`` molecules enter through face ``f`` from
    a reservoir of drift ``face_u[f]`` (3,) and ``temperature``, with the
    velocities of :func:`dsmc.kernels.inject.entering_velocity` (the
    species' ``mass``, ``rot_dof``, ``theta_vib``).  Each starts at a
    uniformly distributed point of its face and flies a uniform fraction
    ``U`` in (0, 1] of ``dt`` through :func:`_fly_2d`: walls re-emit it (their
    accumulators are ``wall_acc[side, wall]``), bodies too (their panels'
    accumulators are ``surf``; the body tables and ``eps`` as in
    :func:`move_2d`), an open side removes it (``pos[i, 0] = -1``, counted in
    ``wall_acc[side, open side]``).  Every random number comes from stream
    ``side`` of ``state``.  ``acc`` (N_INJECT_ACC,) gets the count, momentum
    and kinetic energy of the molecules that entered.
    """
    axis = side // 2
    direction = 1.0 if side % 2 == 0 else -1.0
    plane = 0.0
    if side == 1:
        plane = lx
    elif side == 3:
        plane = ly
    along_max = ly if axis == 0 else lx
    per_x = int(walls[0, W_MODEL]) == PERIODIC
    per_y = int(walls[2, W_MODEL]) == PERIODIC
    c_mp = math.sqrt(2.0 * K_B * temperature / mass)
    sig = c_mp * 0.7071067811865476
    internal = erot.size > 0
    i = start
    for f in range(counts.size):
        u = face_u[f]
        s = direction * u[axis] / c_mp
        for _ in range(counts[f]):
            v0, v1, v2 = entering_velocity(axis, direction, s, c_mp, sig, u, state, side)
            along = min((f + uniform(state, side)) * face_size, along_max)
            frac = uniform_open0(state, side)
            pos[i, axis] = plane
            pos[i, 1 - axis] = along
            v[i, 0] = v0
            v[i, 1] = v1
            v[i, 2] = v2
            sp[i] = species
            if internal:
                erot[i] = 0.0
                vib[i] = 0
            add_injected(acc, mass, v0, v1, v2)
            if _fly_2d(pos, v, erot, vib, i, frac * dt, lx, ly, walls, per_x, per_y, mass, rot_dof,
                       theta_vib, state, side, wall_acc, elem, body_box, body_first, body_walls,
                       surf, eps):
                pos[i, 0] = -1.0  # left through an open side within its first flight
            else:
                if per_x:
                    pos[i, 0] = pos[i, 0] % lx
                if per_y:
                    pos[i, 1] = pos[i, 1] % ly
            i += 1


def n_blocks(n: int, block_size: int) -> int:
    return (n + block_size - 1) // block_size


def wall_totals(acc: np.ndarray, n: int, block_size: int) -> np.ndarray:
    """Sum the per-block wall accumulators of the blocks in use."""
    return acc[: n_blocks(n, block_size)].sum(axis=0)
