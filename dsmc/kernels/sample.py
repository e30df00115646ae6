"""Per-cell velocity moments for the macroscopic fields.

For each cell ``c`` and species ``s`` the particles of the cell (sorted
order) add the raw moments

    0: count   1-3: v_x, v_y, v_z   4-6: v_x^2, v_y^2, v_z^2
    7: v_x v_y   8: v_x v_z   9: v_y v_z   10-12: |v|^2 v_x, |v|^2 v_y, |v|^2 v_z
    13: rotational energy e_r (J)   14: vibrational level i

from which :mod:`dsmc.stats` forms density, velocity, pressure tensor,
temperatures and heat flux.

:func:`add_cell_moments` is the one implementation of these sums, for one
cell.  The time loop calls it from :func:`dsmc.kernels.collide.collide_ntc`,
just before or just after a cell's collisions while its particles are in the
cache; :func:`sample_cells` applies it to every cell in a pass of its own,
with the same sums in the same order, so the two give bit-identical moments.
The separate pass cost 2.3 of about 25 ns per particle-step (one thread,
1e6 particles); inside the collision kernel the sampling costs about 1 ns in
the cache and out of it makes the step faster (see the collide module).
Both callers compile with ``fastmath={"contract"}`` (fused multiply-adds, the
same in both, see the collide module); a caller without it would round the
products separately and lose the bit-identity.
"""

from __future__ import annotations

import numba as nb

N_MOMENTS = 15


@nb.njit(inline="always")
def add_cell_moments(v, sp, erot, vib, lo, hi, acc, c):
    """Add the raw moments of particles ``lo .. hi-1`` (cell ``c``) to ``acc[c]``.

    ``acc`` is (n_cells, n_species, 15).  ``erot``/``vib`` are empty when no
    species has internal energy (moments 13 and 14 stay zero).  Sums are kept
    in scalars over a cell and species and added to ``acc`` once: indexing
    ``acc`` per particle cost 7.2 ns per particle, the scalar sums 4.3 ns (one
    thread, 1e6 particles, 40 per cell).  With several species the cell is
    read once per species.
    """
    n_species = acc.shape[1]
    internal = erot.size > 0
    for s in range(n_species):
        m0 = m1 = m2 = m3 = m4 = m5 = m6 = m7 = m8 = m9 = m10 = m11 = m12 = 0.0
        m13 = m14 = 0.0
        for i in range(lo, hi):
            if n_species > 1 and sp[i] != s:
                continue
            vx = v[i, 0]
            vy = v[i, 1]
            vz = v[i, 2]
            v2 = vx * vx + vy * vy + vz * vz
            m0 += 1.0
            m1 += vx
            m2 += vy
            m3 += vz
            m4 += vx * vx
            m5 += vy * vy
            m6 += vz * vz
            m7 += vx * vy
            m8 += vx * vz
            m9 += vy * vz
            m10 += v2 * vx
            m11 += v2 * vy
            m12 += v2 * vz
            if internal:
                m13 += erot[i]
                m14 += vib[i]
        a = acc[c, s]
        a[0] += m0
        a[1] += m1
        a[2] += m2
        a[3] += m3
        a[4] += m4
        a[5] += m5
        a[6] += m6
        a[7] += m7
        a[8] += m8
        a[9] += m9
        a[10] += m10
        a[11] += m11
        a[12] += m12
        a[13] += m13
        a[14] += m14


@nb.njit(parallel=True, cache=True, fastmath={"contract"})
def sample_cells(v, sp, erot, vib, cell_start, acc):
    """Add the raw moments of every cell to ``acc`` (n_cells, n_species, 15), in a pass of
    its own (:func:`add_cell_moments`); the time loop samples inside ``collide_ntc``."""
    for c in nb.prange(cell_start.size - 1):
        add_cell_moments(v, sp, erot, vib, cell_start[c], cell_start[c + 1], acc, c)
