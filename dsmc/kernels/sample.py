"""Per-cell velocity moments for the macroscopic fields.

For each cell ``c`` and species ``s`` the kernel adds, over the particles of
the cell (sorted order), the raw moments

    0: count   1-3: v_x, v_y, v_z   4-6: v_x^2, v_y^2, v_z^2
    7: v_x v_y   8: v_x v_z   9: v_y v_z   10-12: |v|^2 v_x, |v|^2 v_y, |v|^2 v_z
    13: rotational energy e_r (J)   14: vibrational level i

from which :mod:`dsmc.stats` forms density, velocity, pressure tensor,
temperatures and heat flux.
"""

from __future__ import annotations

import numba as nb

N_MOMENTS = 15


@nb.njit(parallel=True, cache=True)
def sample_cells(v, sp, erot, vib, cell_start, acc):
    """Add the raw moments of every cell to ``acc`` (n_cells, n_species, 15)."""
    n_cells = cell_start.size - 1
    for c in nb.prange(n_cells):
        for i in range(cell_start[c], cell_start[c + 1]):
            s = sp[i]
            vx = v[i, 0]
            vy = v[i, 1]
            vz = v[i, 2]
            v2 = vx * vx + vy * vy + vz * vz
            # direct indexing: a row view per particle costs more than the sums
            acc[c, s, 0] += 1.0
            acc[c, s, 1] += vx
            acc[c, s, 2] += vy
            acc[c, s, 3] += vz
            acc[c, s, 4] += vx * vx
            acc[c, s, 5] += vy * vy
            acc[c, s, 6] += vz * vz
            acc[c, s, 7] += vx * vy
            acc[c, s, 8] += vx * vz
            acc[c, s, 9] += vy * vz
            acc[c, s, 10] += v2 * vx
            acc[c, s, 11] += v2 * vy
            acc[c, s, 12] += v2 * vz
            acc[c, s, 13] += erot[i]
            acc[c, s, 14] += vib[i]
