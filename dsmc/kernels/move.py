"""Ballistic move with exact wall-hit times.

A particle flies in a straight line for the time step; when its path crosses a
wall, it is moved to the hit point, re-emitted by the wall model
(:func:`dsmc.kernels.surfaces.reflect`) and flies the rest of the step with the
new velocity, so several hits in one step are handled exactly.  What each wall
receives (hits, momentum, energy) is accumulated per particle block and per
wall into ``acc[block, wall, :]``:

    0: hits   1..3: m (v_in - v_out)   4: m (|v_in|^2 - |v_out|^2) / 2 + e_int,in - e_int,out

Particle ``i`` belongs to block ``i // block_size``, and block ``b`` draws its
random numbers from stream ``b``: the result does not depend on how blocks are
spread over threads.
"""

from __future__ import annotations

import numba as nb
import numpy as np

from dsmc.kernels.surfaces import PERIODIC, W_MODEL, reemit_internal, reflect

N_WALL_ACC = 5
# wall hits one particle may make in one step; reached only by absurd time steps, where the
# remaining flight time no longer decreases in floating point (the particle then stays at the wall)
MAX_HITS = 100_000


@nb.njit(inline="always")
def _hit(v, wall, nx, mass, state, b, acc_row, erot, vib, i, rot_dof, theta_vib):
    e_in = v[0] * v[0] + v[1] * v[1] + v[2] * v[2]
    p0 = v[0]
    p1 = v[1]
    p2 = v[2]
    used = reflect(v, nx, 0.0, wall, mass, state, b)
    de = reemit_internal(erot, vib, i, used, wall, rot_dof, theta_vib, state, b)
    acc_row[0] += 1.0
    acc_row[1] += mass * (p0 - v[0])
    acc_row[2] += mass * (p1 - v[1])
    acc_row[3] += mass * (p2 - v[2])
    acc_row[4] += 0.5 * mass * (e_in - (v[0] * v[0] + v[1] * v[1] + v[2] * v[2])) + de


@nb.njit(parallel=True, cache=True)
def move_1d(pos, v, sp, erot, vib, n, dt, length, walls, mass, rot_dof, theta_vib, state,
            block_size, acc):
    """Advance particles ``0..n-1`` of a 1-D slab ``0 <= x <= length`` by ``dt``.

    ``pos`` has shape (n, 1); ``v`` (n, 3).

    ``walls`` has two rows (x = 0, x = length); a periodic pair wraps instead.
    ``mass[sp[i]]`` is the molecular mass of particle ``i``; ``erot`` / ``vib``
    its internal energy, re-emitted with ``rot_dof[sp[i]]`` (int) and
    ``theta_vib[sp[i]]`` (K, 0 = off).  ``acc`` has shape
    ``(n_blocks, 2, N_WALL_ACC)`` and is overwritten.
    """
    n_blocks = (n + block_size - 1) // block_size
    periodic = int(walls[0, W_MODEL]) == PERIODIC
    for b in nb.prange(n_blocks):
        for w in range(2):
            for k in range(N_WALL_ACC):
                acc[b, w, k] = 0.0
        lo = b * block_size
        hi = min(n, lo + block_size)
        for i in range(lo, hi):
            vi = v[i]
            if periodic:
                pos[i, 0] = (pos[i, 0] + vi[0] * dt) % length
                continue
            si = sp[i]
            m = mass[si]
            xi = pos[i, 0]
            t = dt
            hits = 0
            while True:
                xn = xi + vi[0] * t
                if xn < 0.0:
                    t -= xi / (-vi[0])
                    xi = 0.0
                    _hit(vi, walls[0], 1.0, m, state, b, acc[b, 0], erot, vib, i, rot_dof[si],
                         theta_vib[si])
                elif xn > length:
                    t -= (length - xi) / vi[0]
                    xi = length
                    _hit(vi, walls[1], -1.0, m, state, b, acc[b, 1], erot, vib, i, rot_dof[si],
                         theta_vib[si])
                else:
                    xi = xn
                    break
                hits += 1
                if t <= 0.0 or hits >= MAX_HITS:
                    break
            pos[i, 0] = xi


def n_blocks(n: int, block_size: int) -> int:
    return (n + block_size - 1) // block_size


def wall_totals(acc: np.ndarray, n: int, block_size: int) -> np.ndarray:
    """Sum the per-block wall accumulators of the blocks in use."""
    return acc[: n_blocks(n, block_size)].sum(axis=0)
